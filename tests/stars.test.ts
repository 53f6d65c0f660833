// The campaign's stars list (src/server/stars.ts, shown by /campaigns/:id/stars) on a real migrated
// SQLite: keyset pages forwards and back, the prefix filter, measurement counts and current fits
// as a worker writes them, and a query plan that walks the (campaign_id, star_key) index.
import { afterEach, describe, expect, it } from 'vitest';
import { startBatch } from '../src/server/batches';
import { listStars, parseStarListRequest, starPageSql } from '../src/server/stars';
import { createWorker } from '../workers/runner';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { MOCK_BANDS, insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
afterEach(() => {
  for (const a of apps.splice(0)) a.cleanup();
});

async function world(count: number) {
  const t = createTestApp();
  apps.push(t);
  const analyst = await makeUser(t.app);
  const campaign = makeCampaign(t.app, analyst, { name: 'Heron Reach' });
  const mock = insertMockStars(t.db, { campaignId: campaign.id, count, fewBandsEvery: 10 });
  return { t, analyst, campaign, mock };
}

const req = (q: string) => parseStarListRequest(new URLSearchParams(q));

describe('the stars list', () => {
  it('pages forwards and back by star id without gaps or repeats', async () => {
    const w = await world(25);
    const all = w.mock.map((m) => m.starKey).sort();
    const seen: string[] = [];
    let page = listStars(w.t.db, w.campaign.id, req('limit=10'));
    expect(page.total).toBe(25);
    expect(page.prevBefore).toBeNull();
    const pages = [page];
    while (page.nextAfter) {
      page = listStars(w.t.db, w.campaign.id, req(`limit=10&after=${encodeURIComponent(page.nextAfter)}`));
      pages.push(page);
    }
    for (const p of pages) seen.push(...p.rows.map((r) => r.starKey));
    expect(seen).toEqual(all);
    expect(pages.map((p) => p.rows.length)).toEqual([10, 10, 5]);
    expect(pages[2].nextAfter).toBeNull();

    // Back from the last page gives exactly the middle page, then the first.
    const back = listStars(w.t.db, w.campaign.id, req(`limit=10&before=${encodeURIComponent(pages[2].prevBefore!)}`));
    expect(back.rows.map((r) => r.starKey)).toEqual(all.slice(10, 20));
    expect(back.nextAfter).toBe(all[19]);
    const front = listStars(w.t.db, w.campaign.id, req(`limit=10&before=${encodeURIComponent(back.prevBefore!)}`));
    expect(front.rows.map((r) => r.starKey)).toEqual(all.slice(0, 10));
    expect(front.prevBefore).toBeNull();
  });

  it('filters by the start of the star id, and counts only those', async () => {
    const w = await world(25);
    const page = listStars(w.t.db, w.campaign.id, req('q=KST-00001'));
    expect(page.rows.map((r) => r.starKey)).toEqual(['KST-000010', 'KST-000011', 'KST-000012', 'KST-000013', 'KST-000014', 'KST-000015', 'KST-000016', 'KST-000017', 'KST-000018', 'KST-000019']);
    expect(page.total).toBe(10);
    expect(listStars(w.t.db, w.campaign.id, req('q=kst')).total).toBe(0); // star ids are case-sensitive
  });

  it('shows each star’s measurement count and its current fit once a batch has run', async () => {
    const w = await world(20);
    const before = listStars(w.t.db, w.campaign.id, req(''));
    expect(before.rows.every((r) => r.fit === null)).toBe(true);
    // insertMockStars gives every star all MOCK_BANDS except every 10th, which gets a single band.
    expect(before.rows.find((r) => r.starKey === 'KST-000001')!.measurementCount).toBe(MOCK_BANDS.length);
    expect(before.rows.find((r) => r.starKey === 'KST-000010')!.measurementCount).toBe(1);

    // The mock stars are blackbodies: Planck only, so the check below is the Planck fit's.
    startBatch(w.t.app, w.analyst, w.campaign.id, { options: { planckOnly: true } });
    await createWorker(w.t.app, { owner: 'test', drain: true, idleMs: 5 }).run();
    const after = listStars(w.t.db, w.campaign.id, req(''));
    const fitted = after.rows.find((r) => r.starKey === 'KST-000001')!;
    const mock1 = w.mock.find((m) => m.starKey === 'KST-000001')!;
    expect(fitted.fit).toMatchObject({ ok: true, reviewStatus: 'pending' });
    // Noise-free mock magnitudes by direct integration: the fit recovers T to 1e-4 (self-consistency).
    expect(Math.abs(fitted.fit!.teffK! / mock1.teffK - 1)).toBeLessThan(1e-4);
    const failed = after.rows.find((r) => r.starKey === 'KST-000010')!;
    expect(failed.fit).toMatchObject({ ok: false, teffK: null });
    expect(failed.fit!.failureReason).toMatch(/at least 2 are needed|usable detection/);
  });

  it('keeps other campaigns’ stars out', async () => {
    const w = await world(3);
    const other = makeCampaign(w.t.app, w.analyst, { name: 'Other field' });
    insertMockStars(w.t.db, { campaignId: other.id, count: 4, prefix: 'OTH' });
    expect(listStars(w.t.db, w.campaign.id, req('')).rows.map((r) => r.starKey)).toEqual(['KST-000001', 'KST-000002', 'KST-000003']);
    expect(listStars(w.t.db, other.id, req('')).total).toBe(4);
  });

  it('refuses bad paging parameters with a message naming them', () => {
    expect(() => req('limit=0')).toThrow(/limit must be a whole number from 1 to 500; got "0"/);
    expect(() => req('limit=abc')).toThrow(/limit must be/);
    expect(() => req('after=a&before=b')).toThrow(/either after or before/);
  });

  it('reads a page through the (campaign, star id) index, without sorting the campaign', async () => {
    const w = await world(2);
    for (const from of ['first', 'after', 'before'] as const) {
      const plan = w.t.sqlite
        .prepare(`EXPLAIN QUERY PLAN ${starPageSql(from)}`)
        .all({ campaignId: w.campaign.id, lo: '', hi: '\u{10ffff}', key: 'KST-000001', limit: 101 }) as { detail: string }[];
      const text = plan.map((p) => p.detail).join('\n');
      expect(text, from).toMatch(/SEARCH s USING (COVERING )?INDEX stars_campaign_key_unique \(campaign_id=\? AND star_key>\? AND star_key<\?\)/);
      expect(text, from).toMatch(/fit_results_current_star_idx/);
      expect(text, from).not.toMatch(/TEMP B-TREE/);
    }
  });
});
