// The catalogue's summary bins (drizzle/0014, triggers on fit_results) against a full recomputation
// from the stored results, done here in plain code: after a batch is written, after reviews (one by
// one and in bulk), after a re-fit that supersedes earlier fits, after a result's flags and values
// change, and after a batch is deleted. Real migrated SQLite, real worker loop.
import { afterEach, describe, expect, it } from 'vitest';
import { catalogueCount, catalogueDiagrams, type CatalogueFilter } from '../src/server/catalogue';
import { catalogueBinsTuning, cellKey, diagramsFromCells, lumBinOf, teffBinOf } from '../src/server/catalogue/bins';
import { bulkDecide, decide } from '../src/server/review';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { makeFittedCatalogue, refit } from './factories-catalogue';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
afterEach(() => {
  for (const a of apps.splice(0)) a.cleanup();
});

interface Row {
  campaign_id: string;
  review_status: string;
  chi2_red: number | null;
  teff_k: number | null;
  lum_lsun: number | null;
  flags: string;
}

/** The bins as defined in src/db/schema/catalogue.ts, recomputed from every current result. */
function recomputed(t: TestApp): Map<string, number> {
  const rows = t.sqlite.prepare('SELECT campaign_id, review_status, chi2_red, teff_k, lum_lsun, flags FROM fit_results WHERE is_current = 1').all() as Row[];
  const out = new Map<string, number>();
  for (const r of rows) {
    const c = r.chi2_red;
    const chi2Class = c === null ? -1 : c <= 1 ? 0 : c <= 2 ? 1 : c <= 3 ? 2 : c <= 5 ? 3 : c <= 10 ? 4 : 5;
    const teffBin = r.teff_k === null ? -1 : Math.floor(r.teff_k / 100);
    const lumBin = r.lum_lsun === null || r.lum_lsun <= 0 ? -100000 : Math.floor(Math.log10(r.lum_lsun) * 10);
    for (const flag of new Set(['', ...r.flags.split(' ').filter(Boolean)])) {
      const k = [r.campaign_id, flag, r.review_status, chi2Class, teffBin, lumBin].join('|');
      out.set(k, (out.get(k) ?? 0) + 1);
    }
  }
  return out;
}

function stored(t: TestApp): Map<string, number> {
  const rows = t.sqlite.prepare('SELECT campaign_id, flag, review_status, chi2_class, teff_bin, lum_bin, n FROM catalogue_bins WHERE n <> 0').raw().all() as (string | number)[][];
  return new Map(rows.map((r) => [r.slice(0, 6).join('|'), r[6] as number]));
}

function expectBinsMatch(t: TestApp, when: string) {
  const want = recomputed(t);
  const got = stored(t);
  expect(got.size, when).toBeGreaterThan(0);
  expect(Object.fromEntries(got), when).toEqual(Object.fromEntries(want));
  // No cell ever goes below zero.
  expect(t.sqlite.prepare('SELECT count(*) FROM catalogue_bins WHERE n < 0').pluck().get(), when).toBe(0);
}

/** Filters the bins answer (statuses, a flag present or absent, χ²_ν ≤ an edge, any Teff range). */
const BINNED_FILTERS: CatalogueFilter[] = [
  {},
  { status: ['accepted'] },
  { status: ['pending', 'flagged'], chi2Max: 2 },
  { flag: 'plx_missing' },
  { flag: 'plx_missing', flagAbsent: true },
  { teffMinK: 5000, teffMaxK: 7000 },
  // Limits that cut bins (those parts are read from the results), one of them on a result's exact Teff.
  { teffMinK: 4321, teffMaxK: 6789 },
  { teffMaxK: 6000 },
  { status: ['accepted', 'pending'], teffMinK: 5555, flag: 'plx_missing' },
  { status: ['accepted'], chi2Max: 5, teffMinK: 4000, flag: 'plx_missing', flagAbsent: true },
];

function expectSameAsScan(t: TestApp, campaignId: string) {
  // Inside a transaction nothing is cached, so each call computes afresh.
  // A range inside one bin, around a result's Teff.
  const inBin = t.sqlite
    .prepare('SELECT teff_k FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND teff_k IS NOT NULL AND teff_k - 100 * floor(teff_k / 100) BETWEEN 10 AND 90 LIMIT 1')
    .pluck()
    .get(campaignId) as number;
  t.sqlite.transaction(() => {
    for (const f of [...BINNED_FILTERS, { teffMinK: inBin - 5, teffMaxK: inBin + 5 }]) {
      const read = (enabled: boolean) => {
        catalogueBinsTuning.enabled = enabled;
        try {
          return {
            count: catalogueCount(t.db, campaignId, f),
            points: catalogueDiagrams(t.db, campaignId, f),
            density: catalogueDiagrams(t.db, campaignId, f, { pointLimit: 1, densityBins: [9, 7], histogramBins: 12 }),
          };
        } finally {
          catalogueBinsTuning.enabled = true;
        }
      };
      const fromBins = read(true);
      const fromRows = read(false);
      expect(fromBins.count.total, JSON.stringify(f)).toBeGreaterThan(0);
      expect(fromBins, JSON.stringify(f)).toEqual(fromRows);
    }
  })();
}

describe('catalogue summary bins', () => {
  it('equal a full recomputation after a batch, reviews, a re-fit, changed values and a deleted batch', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '25' });
    apps.push(t);
    const analyst = await makeUser(t.app);
    const reviewer = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    await addToCampaign(t.app, analyst, campaign.id, reviewer, ['reviewer']);
    const other = makeCampaign(t.app, analyst, { name: 'Second field' });
    // Few-band stars (failed fits, no Teff), stars without parallax (no L), two campaigns.
    const cat = await makeFittedCatalogue(t.app, analyst, campaign.id, { count: 120, fewBandsEvery: 13, noParallaxEvery: 9 });
    await makeFittedCatalogue(t.app, analyst, other.id, { count: 30, prefix: 'OTH' });
    expectBinsMatch(t, 'after the first batches');

    // Reviews through the review desk's own code: one decision, then a bulk one.
    decide(t.db, reviewer, cat.pending[0], { decision: 'flagged', reason: 'other', comment: 'odd colours' });
    decide(t.db, reviewer, cat.flagged[0], { decision: 'accepted', comment: 'checked again' });
    expect(bulkDecide(t.db, reviewer, campaign.id, { decision: 'accepted', filter: { teffMinK: 5500 } })).toBeTruthy();
    expectBinsMatch(t, 'after reviews');

    // A re-fit of some stars with other options: their earlier fits stop being current.
    const keys = cat.stars.slice(0, 40).map((s) => s.starKey);
    await refit(t.app, analyst, campaign.id, keys, { law: 'ccm89', floorFraction: 0.05 });
    expectBinsMatch(t, 'after a re-fit');

    // Values and flags changed in place (a script, a repair), and a result deleted.
    t.sqlite.prepare("UPDATE fit_results SET flags = 'outlier chi2_high', chi2_red = 7.5 WHERE id IN (SELECT id FROM fit_results WHERE is_current = 1 AND ok = 1 LIMIT 3)").run();
    t.sqlite.prepare('UPDATE fit_results SET teff_k = teff_k + 250, lum_lsun = lum_lsun * 3 WHERE id IN (SELECT id FROM fit_results WHERE is_current = 1 AND ok = 1 ORDER BY id DESC LIMIT 4)').run();
    t.sqlite.prepare('DELETE FROM fit_results WHERE id = (SELECT max(id) FROM fit_results WHERE campaign_id = ?)').run(other.id);
    t.sqlite.prepare('UPDATE fit_results SET teff_k = 6000 WHERE id = (SELECT min(id) FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND ok = 1)').run(campaign.id);
    expectBinsMatch(t, 'after changes in place');

    // Totals and diagrams from the bins equal those read from every result, on the same grid.
    expectSameAsScan(t, campaign.id);

    // Deleting the re-fit batch makes the earlier fits current again (their rows are updated).
    const refitBatch = t.sqlite.prepare('SELECT id FROM batches WHERE campaign_id = ? ORDER BY created_at DESC LIMIT 1').pluck().get(campaign.id) as string;
    t.sqlite.prepare('DELETE FROM batches WHERE id = ?').run(refitBatch);
    expectBinsMatch(t, 'after a batch is deleted');
  }, 120_000);
});

describe('the temperature histogram of a small catalogue', () => {
  it('has about √n bars for n stars (the square-root choice), each a whole number of stars, on the 100 K grid', () => {
    // 43 stars spread over 3500–9000 K, as a small campaign would be: 7 bars, not one bar per star.
    const cells = new Map<number, number>();
    for (let i = 0; i < 43; i++) {
      const key = cellKey(teffBinOf(3500 + (5500 * i) / 42), lumBinOf(1 + i / 10));
      cells.set(key, (cells.get(key) ?? 0) + 1);
    }
    const d = diagramsFromCells({ cells, noTeff: 0 }, 40, [120, 90]);
    expect(d.histogram.counts).toHaveLength(Math.ceil(Math.sqrt(43)));
    expect(d.histogram.counts.reduce((a, b) => a + b, 0)).toBe(43);
    for (const e of d.histogram.edgesK) expect(e % 100).toBe(0);
    // A large catalogue keeps the limit asked for.
    const many = new Map<number, number>();
    for (let i = 0; i < 5000; i++) {
      const key = cellKey(teffBinOf(3500 + (5500 * i) / 4999), lumBinOf(1));
      many.set(key, (many.get(key) ?? 0) + 1);
    }
    expect(diagramsFromCells({ cells: many, noTeff: 0 }, 40, [120, 90]).histogram.counts.length).toBeLessThanOrEqual(40);
    expect(diagramsFromCells({ cells: many, noTeff: 0 }, 40, [120, 90]).histogram.counts.length).toBeGreaterThan(20);
  });
});
