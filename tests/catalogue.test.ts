// The catalogue's queries on a real migrated SQLite with real fits: which result is current per
// star (the is_current and flag-index triggers), keyset paging forwards and backwards under every
// sort and a spread of filters (compared with a plain reference computed here in JavaScript from
// all rows), both reading plans (index order, and small set sorted in memory), and the diagrams'
// binning into a 2-D histogram.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { GET as pageRoute } from '../src/pages/api/campaigns/[id]/catalogue/index';
import { GET as countRoute } from '../src/pages/api/campaigns/[id]/catalogue/count';
import { GET as diagramsRoute } from '../src/pages/api/campaigns/[id]/catalogue/diagrams';
import {
  CATALOGUE_SORTS,
  catalogueCount,
  catalogueDiagrams,
  cataloguePage,
  catalogueSummaryStats,
  catalogueVersion,
  catalogueTuning,
  type CatalogueRowView,
  type CatalogueSort,
} from '../src/server/catalogue';
import { parseCataloguePageRequest } from '../src/web/catalogue-params';
import Database from 'better-sqlite3';
import { mulberry32 } from '../src/core/fit/random';
import type { Actor } from '../src/server/context';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { makeFittedCatalogue, refit, type FittedCatalogue } from './factories-catalogue';
import { fitAndDrain, insertReviewStars } from '../src/seed/review-stars';
import { seasonTwoSpecs } from '../src/seed/demo-stars';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
let analyst: Actor;
let collaborator: Actor;
let outsider: Actor;
let campaignId: string;
let fitted: FittedCatalogue;
let refitKeys: string[];
let failingBatchId: string;

interface RefRow {
  id: number;
  star_id: number;
  star_key: string;
  ok: number;
  teff_k: number | null;
  lum_lsun: number | null;
  radius_rsun: number | null;
  chi2_red: number | null;
  flags: string;
  review_status: string;
  batch_created: number;
}

beforeAll(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app, { name: 'Ada Analyst' });
  collaborator = await makeUser(t.app, { kind: 'guest' });
  outsider = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst, { name: 'Hollowmere survey' }).id;
  await addToCampaign(t.app, analyst, campaignId, collaborator, ['collaborator']);
  // 240 stars: every 13th has one band only (the fit fails, all values empty), every 7th no parallax
  // (no radius or luminosity), so missing values appear under every sort.
  fitted = await makeFittedCatalogue(t.app, analyst, campaignId, { count: 240, fewBandsEvery: 13, noParallaxEvery: 7, seed: 5 });
  // Re-fit 20 stars with other options: their new results replace the old ones in the catalogue.
  refitKeys = fitted.stars.filter((_, i) => i % 12 === 1).map((s) => s.starKey);
  await refit(t.app, analyst, campaignId, refitKeys, { law: 'ccm89', floorFraction: 0.05 });
  // Re-fit 3 of those with every band but one excluded: the fits fail, and a failure does not
  // replace a successful fit.
  failingBatchId = await refit(t.app, analyst, campaignId, refitKeys.slice(0, 3), { excludeBands: ['B', 'V', 'G', 'BP', 'RP', 'J', 'H'] });
});
afterAll(() => t?.cleanup());

/** The current result per star computed here from all rows: newest success, else newest failure. */
function reference(): RefRow[] {
  const all = t.sqlite
    .prepare(
      `SELECT f.id, f.star_id, s.star_key, f.ok, f.teff_k, f.lum_lsun, f.radius_rsun, f.chi2_red, f.flags, f.review_status, b.created_at AS batch_created
       FROM fit_results f JOIN stars s ON s.id = f.star_id JOIN batches b ON b.id = f.batch_id WHERE f.campaign_id = ?`,
    )
    .all(campaignId) as RefRow[];
  const best = new Map<number, RefRow>();
  const rank = (r: RefRow) => [r.ok, r.batch_created, r.id];
  for (const r of all) {
    const cur = best.get(r.star_id);
    if (!cur) {
      best.set(r.star_id, r);
      continue;
    }
    const a = rank(r);
    const b = rank(cur);
    if (a[0] > b[0] || (a[0] === b[0] && (a[1] > b[1] || (a[1] === b[1] && a[2] > b[2])))) best.set(r.star_id, r);
  }
  return [...best.values()];
}

const sortValue = (r: RefRow, sort: CatalogueSort): string | number | null => (sort === 'star_key' ? r.star_key : r[sort]);

function expected(params: URLSearchParams): number[] {
  const sort = (params.get('sort') ?? 'teff_k') as CatalogueSort;
  const dir = params.get('dir') ?? 'asc';
  const status = params.get('status');
  const lo = params.get('teffMin');
  const hi = params.get('teffMax');
  const chi = params.get('chi2Max');
  const flag = params.get('flag');
  const absent = params.get('flagAbsent') === '1';
  const q = params.get('q');
  const rows = reference().filter((r) => {
    if (status && status !== 'all' && !status.split(',').includes(r.review_status)) return false;
    if (lo !== null && !(r.teff_k !== null && r.teff_k >= Number(lo))) return false;
    if (hi !== null && !(r.teff_k !== null && r.teff_k <= Number(hi))) return false;
    if (chi !== null && !(r.chi2_red !== null && r.chi2_red <= Number(chi))) return false;
    if (flag) {
      const has = r.flags.split(' ').includes(flag);
      if (has === absent) return false;
    }
    if (q && !r.star_key.startsWith(q)) return false;
    return true;
  });
  const withValue = rows.filter((r) => sortValue(r, sort) !== null);
  const without = rows.filter((r) => sortValue(r, sort) === null).sort((a, b) => a.id - b.id);
  const sign = dir === 'asc' ? 1 : -1;
  withValue.sort((a, b) => {
    const va = sortValue(a, sort)!;
    const vb = sortValue(b, sort)!;
    if (va < vb) return -sign;
    if (va > vb) return sign;
    return sign * (a.id - b.id);
  });
  return [...withValue, ...without].map((r) => r.id);
}

function walkForward(params: URLSearchParams, limit: number): { ids: number[]; pages: { rows: CatalogueRowView[]; prevCursor: string | null; nextCursor: string | null }[] } {
  const pages = [];
  let after: string | null = null;
  for (let guard = 0; guard < 1000; guard++) {
    const p = new URLSearchParams(params);
    p.set('limit', String(limit));
    if (after) p.set('after', after);
    const page = cataloguePage(t.db, campaignId, parseCataloguePageRequest(p));
    pages.push(page);
    if (!page.nextCursor) break;
    after = page.nextCursor;
  }
  return { ids: pages.flatMap((p) => p.rows.map((r) => r.fitId)), pages };
}

function walkBackward(params: URLSearchParams, limit: number, from: string): number[] {
  const out: number[][] = [];
  let before: string | null = from;
  for (let guard = 0; before && guard < 1000; guard++) {
    const p = new URLSearchParams(params);
    p.set('limit', String(limit));
    p.set('before', before);
    const page = cataloguePage(t.db, campaignId, parseCataloguePageRequest(p));
    out.unshift(page.rows.map((r) => r.fitId));
    before = page.prevCursor;
  }
  return out.flat();
}

function filterCombos(): URLSearchParams[] {
  const rand = mulberry32(99);
  const combos: URLSearchParams[] = [new URLSearchParams()];
  const flags = ['plx_missing', 'few_bands', 'outlier', 'clipped', 'chi2_high'];
  for (let i = 0; i < 14; i++) {
    const p = new URLSearchParams();
    if (rand() < 0.5) p.set('status', ['accepted', 'pending', 'flagged', 'accepted,flagged'][Math.floor(rand() * 4)]);
    if (rand() < 0.4) {
      const lo = 4000 + rand() * 3000;
      p.set('teffMin', lo.toFixed(1));
      p.set('teffMax', (lo + 400 + rand() * 2000).toFixed(1));
    }
    if (rand() < 0.3) p.set('chi2Max', (0.01 + rand()).toFixed(3));
    if (rand() < 0.4) {
      p.set('flag', flags[Math.floor(rand() * flags.length)]);
      if (rand() < 0.5) p.set('flagAbsent', '1');
    }
    if (rand() < 0.25) p.set('q', `KST-0000${Math.floor(rand() * 3)}`);
    combos.push(p);
  }
  // The accepted catalogue and two pointed cases: only rows without values, and nothing at all.
  combos.push(new URLSearchParams({ status: 'accepted' }), new URLSearchParams({ flag: 'plx_missing' }), new URLSearchParams({ q: 'NOPE' }));
  return combos;
}

describe('which result is current', () => {
  it('is the newest successful fit of each star, else its newest failure, and the flag index follows', () => {
    const ref = reference();
    const current = t.sqlite.prepare('SELECT id FROM fit_results WHERE campaign_id = ? AND is_current = 1 ORDER BY id').pluck().all(campaignId);
    expect(current).toEqual(ref.map((r) => r.id).sort((a, b) => a - b));
    expect(ref).toHaveLength(240);
    // The re-fitted stars show their second fit (ccm89), also the three whose third fit failed.
    const byKey = new Map(ref.map((r) => [r.star_key, r]));
    for (const key of refitKeys.filter((k) => byKey.get(k)!.ok === 1)) {
      const law = t.sqlite.prepare("SELECT json_extract(b.options, '$.law') FROM fit_results f JOIN batches b ON b.id = f.batch_id WHERE f.id = ?").pluck().get(byKey.get(key)!.id);
      expect(law).toBe('ccm89');
    }
    // Their third fits failed: current only for a star that never had a successful fit.
    const third = t.sqlite
      .prepare('SELECT f.ok, f.flags, f.is_current, (SELECT count(*) FROM fit_results o WHERE o.star_id = f.star_id AND o.ok = 1) AS successes FROM fit_results f WHERE f.batch_id = ?')
      .all(failingBatchId) as { ok: number; flags: string; is_current: number; successes: number }[];
    expect(third).toHaveLength(3);
    for (const r of third) expect(r).toEqual({ ok: 0, flags: 'few_bands', is_current: r.successes === 0 ? 1 : 0, successes: r.successes });
    expect(third.filter((r) => r.successes > 0).length).toBeGreaterThan(0);
    // fit_result_flags holds exactly the flags of current results.
    const indexed = t.sqlite.prepare('SELECT fit_result_id || \':\' || code FROM fit_result_flags WHERE campaign_id = ? ORDER BY 1').pluck().all(campaignId);
    const want = ref.flatMap((r) => (r.flags ? r.flags.split(' ').map((c) => `${r.id}:${c}`) : [])).sort();
    expect(indexed).toEqual(want);
    expect(want.length).toBeGreaterThan(20);
  });
});

describe('catalogue pages', () => {
  for (const smallSet of [4000, 0]) {
    it(`walk forwards and backwards through every sort and filter in reference order (${smallSet ? 'small sets sorted in memory' : 'index order'})`, () => {
      catalogueTuning.smallSet = smallSet;
      try {
        let checked = 0;
        for (const filter of filterCombos()) {
          for (const sort of CATALOGUE_SORTS) {
            for (const dir of ['asc', 'desc']) {
              const params = new URLSearchParams(filter);
              params.set('sort', sort);
              params.set('dir', dir);
              const want = expected(params);
              const limit = 1 + ((checked * 7) % 23);
              const fwd = walkForward(params, limit);
              expect(fwd.ids, `${params}`).toEqual(want);
              // Backwards from the end: every page's prevCursor leads to the page before it.
              const last = fwd.pages[fwd.pages.length - 1];
              if (last.rows.length) {
                const tail = last.rows.map((r) => r.fitId);
                const before = walkBackward(params, limit, last.prevCursor ?? '');
                expect(last.prevCursor === null ? tail : [...before, ...tail], `${params} backwards`).toEqual(want);
              }
              checked++;
            }
          }
        }
        expect(checked).toBe(filterCombos().length * CATALOGUE_SORTS.length * 2);
      } finally {
        catalogueTuning.smallSet = 4000;
      }
    });
  }

  it('starts after (or before) any cursor, also one taken from another view, e.g. outside the filter’s Teff range', () => {
    const rand = mulberry32(7);
    const all = reference();
    const byId = new Map(all.map((r) => [r.id, r]));
    for (const smallSet of [4000, 0]) {
      catalogueTuning.smallSet = smallSet;
      try {
        for (const filter of filterCombos()) {
          for (const sort of CATALOGUE_SORTS) {
            for (const dir of ['asc', 'desc']) {
              const params = new URLSearchParams(filter);
              params.set('sort', sort);
              params.set('dir', dir);
              // The full order of every row (no filter) gives each row its position.
              const everyParams = new URLSearchParams({ sort, dir, status: 'all' });
              const order = expected(everyParams);
              const rank = new Map(order.map((id, i) => [id, i]));
              const at = byId.get(order[Math.floor(rand() * order.length)])!;
              const v = sortValue(at, sort);
              const cursor = Buffer.from(JSON.stringify(v === null ? { p: 'n', i: at.id } : { p: 'v', v, i: at.id })).toString('base64url');
              const want = expected(params);
              const after = new URLSearchParams(params);
              after.set('after', cursor);
              after.set('limit', '9');
              const got = cataloguePage(t.db, campaignId, parseCataloguePageRequest(after)).rows.map((r) => r.fitId);
              expect(got, `${after}`).toEqual(want.filter((id) => rank.get(id)! > rank.get(at.id)!).slice(0, 9));
              const before = new URLSearchParams(params);
              before.set('before', cursor);
              before.set('limit', '9');
              const gotBefore = cataloguePage(t.db, campaignId, parseCataloguePageRequest(before)).rows.map((r) => r.fitId);
              expect(gotBefore, `${before}`).toEqual(want.filter((id) => rank.get(id)! < rank.get(at.id)!).slice(-9));
            }
          }
        }
      } finally {
        catalogueTuning.smallSet = 4000;
      }
    }
  });

  it('counts what the filter leaves', () => {
    for (const filter of filterCombos()) {
      const { total, campaignTotal } = catalogueCount(t.db, campaignId, parseCataloguePageRequest(filter));
      expect(total, `${filter}`).toBe(expected(filter).length);
      expect(campaignTotal).toBe(240);
    }
  });

  it('refuses bad parameters with the parameter named', () => {
    const bad = (q: string) => () => parseCataloguePageRequest(new URLSearchParams(q));
    expect(bad('sort=mass')).toThrow(/sort must be one of/);
    expect(bad('status=approved')).toThrow(/"approved" is not a review status/);
    expect(bad('teffMin=hot')).toThrow(/teffMin must be a number/);
    expect(bad('flag=sparkly')).toThrow(/flag must be one of/);
    expect(bad('limit=0')).toThrow(/limit must be a whole number from 1 to 500/);
    expect(() => cataloguePage(t.db, campaignId, parseCataloguePageRequest(new URLSearchParams('sort=teff_k&after=garbage')))).toThrow(/cursor is not valid/);
  });
});

/** Edges on whole hundreds of kelvin, the first at the coolest value's hundred, the last above the hottest. */
function expectOnTeffGrid(edgesK: number[], teffs: number[]) {
  for (const e of edgesK) expect(e % 100).toBe(0);
  expect(edgesK[0]).toBe(Math.floor(Math.min(...teffs) / 100) * 100);
  expect(edgesK[edgesK.length - 1]).toBeGreaterThan(Math.max(...teffs));
}

/** Counts of values in [edge_i, edge_i+1), counted here. */
function histogramOf(values: number[], edges: number[]): number[] {
  return edges.slice(0, -1).map((lo, i) => values.filter((v) => v >= lo && v < edges[i + 1]).length);
}

describe('diagrams', () => {
  it('sends points when there are few, each with its star, and a Teff histogram of every row with a Teff', () => {
    const d = catalogueDiagrams(t.db, campaignId, {});
    const ref = reference();
    const placed = ref.filter((r) => r.teff_k !== null && r.lum_lsun !== null && r.lum_lsun > 0);
    expect(d.density).toBeNull();
    expect(d.points!.map((p) => p.starId).sort((a, b) => a - b)).toEqual(placed.map((r) => r.star_id).sort((a, b) => a - b));
    expect(d.placed).toBe(placed.length);
    expect(d.withoutLum).toBe(ref.filter((r) => r.teff_k !== null).length - placed.length);
    expect(d.histogram.counts.reduce((a, b) => a + b, 0)).toBe(ref.filter((r) => r.teff_k !== null).length);
    const teffs = ref.filter((r) => r.teff_k !== null).map((r) => r.teff_k!);
    // Bars on whole hundreds of kelvin (the summary bins' grid), from the coolest star's hundred on.
    expectOnTeffGrid(d.histogram.edgesK, teffs);
    expect(d.histogram.edgesK.length - 1).toBeLessThanOrEqual(40);
    expect(d.histogram.counts).toEqual(histogramOf(teffs, d.histogram.edgesK));
  });

  it('bins into a 2-D histogram on Teff × log L above the point limit, every star in its own cell', () => {
    const points = catalogueDiagrams(t.db, campaignId, { status: ['accepted', 'pending'] }).points!;
    const d = catalogueDiagrams(t.db, campaignId, { status: ['accepted', 'pending'] }, { pointLimit: 50, densityBins: [12, 9] });
    expect(d.points).toBeNull();
    const g = d.density!;
    // At most the asked-for 12 × 9 bins, on the bins' grid: whole hundreds of kelvin, tenths of a dex.
    expect(g.teffEdgesK.length).toBeLessThanOrEqual(13);
    expect(g.logLumEdges.length).toBeLessThanOrEqual(10);
    expectOnTeffGrid(g.teffEdgesK, points.map((p) => p.teffK));
    for (const e of g.logLumEdges) expect(Math.abs(e * 10 - Math.round(e * 10))).toBeLessThan(1e-9);
    expect(g.logLumEdges[0]).toBeLessThanOrEqual(Math.min(...points.map((p) => Math.log10(p.lumLsun))));
    expect(g.logLumEdges[g.logLumEdges.length - 1]).toBeGreaterThan(Math.max(...points.map((p) => Math.log10(p.lumLsun))));
    const want = Array.from({ length: g.logLumEdges.length - 1 }, () => new Array<number>(g.teffEdgesK.length - 1).fill(0));
    const cell = (edges: number[], x: number) => {
      let i = edges.findIndex((e, k) => k > 0 && x < e) - 1;
      if (i < 0) i = edges.length - 2; // the top edge belongs to the last bin
      return i;
    };
    for (const p of points) want[cell(g.logLumEdges, Math.log10(p.lumLsun))][cell(g.teffEdgesK, p.teffK)]++;
    expect(g.counts).toEqual(want);
    expect(g.counts.flat().reduce((a, b) => a + b, 0)).toBe(points.length);
  });
});

describe('diagrams with a flag filter', () => {
  it('place exactly the stars with (or without) the flag, as points and as a density', async () => {
    // Invented stars with infrared excesses, bad bands and weak parallaxes (the demo's generator), fitted for real.
    const cid = makeCampaign(t.app, analyst, { name: 'Quillmarsh flags' }).id;
    insertReviewStars(t.app.db, cid, seasonTwoSpecs(80, 77), { seed: 78 });
    await fitAndDrain(t.app, analyst, cid);
    const ref = t.sqlite
      .prepare('SELECT star_id, teff_k, lum_lsun, flags FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND teff_k IS NOT NULL')
      .all(cid) as { star_id: number; teff_k: number; lum_lsun: number | null; flags: string }[];
    const placedRef = ref.filter((r) => r.lum_lsun !== null && r.lum_lsun > 0);
    const allFlags = t.sqlite.prepare('SELECT flags FROM fit_results WHERE campaign_id = ? AND is_current = 1').pluck().all(cid) as string[];
    for (const code of ['ir_excess', 'plx_weak']) {
      for (const flagAbsent of [false, true]) {
        const want = ref.filter((r) => r.flags.split(' ').includes(code) !== flagAbsent);
        const placedWant = placedRef.filter((r) => r.flags.split(' ').includes(code) !== flagAbsent);
        expect(placedWant.length, code).toBeGreaterThan(1);
        const points = catalogueDiagrams(t.db, cid, { flag: code, flagAbsent });
        expect(points.points!.map((p) => p.starId).sort((a, b) => a - b), code).toEqual(placedWant.map((r) => r.star_id).sort((a, b) => a - b));
        const d = catalogueDiagrams(t.db, cid, { flag: code, flagAbsent }, { pointLimit: 1, densityBins: [7, 5] });
        expect(d.placed).toBe(placedWant.length);
        expect(d.withoutLum).toBe(want.length - placedWant.length);
        expect(d.histogram.counts.reduce((a, b) => a + b, 0)).toBe(want.length);
        expect(d.density!.counts.flat().reduce((a, b) => a + b, 0)).toBe(placedWant.length);
        expectOnTeffGrid(d.histogram.edgesK, want.map((r) => r.teff_k));
        expect(d.histogram.counts).toEqual(histogramOf(want.map((r) => r.teff_k), d.histogram.edgesK));
        expect(catalogueCount(t.db, cid, { flag: code, flagAbsent }).total).toBe(allFlags.filter((f) => f.split(' ').includes(code) !== flagAbsent).length);
      }
    }
  });
});

describe('cached totals and diagrams', () => {
  it('serve a repeat from the cache and recompute after a new result or a review decision, also one written by another connection', async () => {
    const cid = makeCampaign(t.app, analyst, { name: 'Quillmarsh cache check' }).id;
    const own = await makeFittedCatalogue(t.app, analyst, cid, { count: 24, seed: 9, prefix: 'QMC' });
    const countRef = (status: string) =>
      (t.sqlite.prepare('SELECT count(*) AS n FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = ?').get(cid, status) as { n: number }).n;
    const accepted = { status: ['accepted' as const] };

    const v0 = catalogueVersion(t.sqlite, cid);
    expect(v0).toBeGreaterThan(0);
    const m0 = catalogueSummaryStats.misses;
    const first = catalogueCount(t.db, cid, accepted);
    const d1 = catalogueDiagrams(t.db, cid, accepted);
    expect(catalogueSummaryStats.misses).toBe(m0 + 2);
    const h0 = catalogueSummaryStats.hits;
    expect(catalogueCount(t.db, cid, accepted)).toEqual(first);
    expect(catalogueDiagrams(t.db, cid, accepted)).toEqual(d1);
    expect(catalogueSummaryStats.hits).toBe(h0 + 2);
    expect(catalogueSummaryStats.misses).toBe(m0 + 2);
    expect(first.total).toBe(countRef('accepted'));

    // A new result (a re-fit through the worker): the stamp moves and both are read again.
    const keys = own.stars.slice(0, 4).map((s) => s.starKey);
    await refit(t.app, analyst, cid, keys, { law: 'ccm89' });
    expect(catalogueVersion(t.sqlite, cid)).toBeGreaterThan(v0);
    const afterRefit = catalogueCount(t.db, cid, accepted);
    expect(catalogueSummaryStats.misses).toBe(m0 + 3);
    expect(afterRefit.total).toBe(countRef('accepted'));
    const d2 = catalogueDiagrams(t.db, cid, {});
    const refitTeffs = t.sqlite
      .prepare('SELECT f.teff_k FROM fit_results f JOIN stars s ON s.id = f.star_id WHERE f.campaign_id = ? AND f.is_current = 1 AND f.teff_k IS NOT NULL')
      .pluck()
      .all(cid) as number[];
    expect(d2.histogram.counts.reduce((a, b) => a + b, 0)).toBe(refitTeffs.length);
    expectOnTeffGrid(d2.histogram.edgesK, refitTeffs);
    expect(d2.histogram.counts).toEqual(histogramOf(refitTeffs, d2.histogram.edgesK));

    // A review decision written by another process (its own connection to the same file).
    const before = catalogueCount(t.db, cid, accepted).total;
    const other = new Database(t.filePath);
    try {
      const pendingId = other.prepare("SELECT id FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND ok = 1 AND review_status = 'pending' LIMIT 1").pluck().get(cid) as number;
      expect(pendingId).toEqual(expect.any(Number));
      other.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE id = ?").run(pendingId);
    } finally {
      other.close();
    }
    expect(catalogueCount(t.db, cid, accepted).total).toBe(before + 1);
    expect(catalogueCount(t.db, cid, accepted).total).toBe(countRef('accepted'));
    // Other campaigns keep their stamp (and their cached values).
    const vMain = catalogueVersion(t.sqlite, campaignId);
    t.sqlite.prepare("UPDATE fit_results SET review_status = 'flagged' WHERE campaign_id = ? AND is_current = 1 AND review_status = 'pending' AND id = (SELECT min(id) FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'pending')").run(cid, cid);
    expect(catalogueVersion(t.sqlite, campaignId)).toBe(vMain);
  });
});

describe('catalogue API', () => {
  async function call(route: (ctx: never) => Promise<Response> | Response, actor: Actor | null, query = '') {
    const url = new URL(`http://127.0.0.1/api/campaigns/${campaignId}/catalogue${query}`);
    const res = await route({ locals: { app: t.app, actor }, params: { id: campaignId }, request: new Request(url), url } as never);
    return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
  }

  it('serves members, refuses outsiders (404, as for a missing campaign) and anonymous callers (401), and names a bad parameter (400)', async () => {
    for (const route of [pageRoute, countRoute, diagramsRoute]) {
      expect((await call(route, null)).status).toBe(401);
      expect((await call(route, outsider)).status).toBe(404);
      expect((await call(route, collaborator)).status).toBe(200);
    }
    const page = await call(pageRoute, collaborator, '?status=accepted&sort=star_key&limit=5');
    expect(page.body.rows.map((r: CatalogueRowView) => r.fitId)).toEqual(expected(new URLSearchParams('status=accepted&sort=star_key')).slice(0, 5));
    expect(page.body.nextCursor).toEqual(expect.any(String));
    const count = await call(countRoute, analyst, '?status=accepted');
    expect(count.body.total).toBe(expected(new URLSearchParams('status=accepted')).length);
    const bad = await call(pageRoute, collaborator, '?chi2Max=lots');
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/chi2Max must be a number/);
  });
});
