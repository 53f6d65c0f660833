// In real Chromium against the built server: the analyst releases the accepted catalogue from the
// catalogue page and opens the release's own page; its CSV and FITS downloads, fetched through the
// page's links, match the SHA-256 the page lists; then stars are re-fitted and a decision changes,
// and the same links still give the same bytes (the live catalogue download does not).
import { createHash } from 'node:crypto';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeFittedCatalogue, refit } from '../factories-catalogue';
import { type DemoRun, startWithDemo } from './harness';

let demo: DemoRun;
let batchId: string;

beforeAll(async () => {
  demo = await startWithDemo();
  batchId = (await makeFittedCatalogue(demo.run.app, demo.actor(demo.people.analyst.email), demo.campaignId, { count: 30, prefix: 'REL', seed: 23 })).batchId;
});
afterAll(() => demo?.stop());

/** The bytes behind a link of the page, fetched with the page's session. */
async function fetchBytes(page: Page, href: string): Promise<Buffer> {
  const b64 = await page.evaluate(async (u) => {
    const res = await fetch(u);
    const bytes = new Uint8Array(await res.arrayBuffer());
    let s = '';
    for (const b of bytes) s += String.fromCharCode(b);
    return btoa(s);
  }, href);
  return Buffer.from(b64, 'base64');
}

const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex');

describe('a frozen release in the browser', () => {
  it('keeps the bytes of its downloads after a re-fit and a changed decision', async () => {
    const page = await demo.browser.context.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue`);
    await page.getByLabel('Title').fill('Lanternfield DR1');
    await Promise.all([page.waitForLoadState('load'), page.getByRole('button', { name: 'Release and tell collaborators' }).click()]);
    await Promise.all([page.waitForURL(/\/releases\/[^/]+$/), page.getByTestId('release-link').first().click()]);
    expect(await page.getByTestId('release-title').textContent()).toBe('Lanternfield DR1');
    expect(await page.getByTestId('frozen-note').textContent()).toMatch(/never change/);
    const files = async () => {
      const out: Record<string, { href: string; sha: string }> = {};
      for (const row of await page.locator('[data-testid="release-files"] tbody tr').all()) {
        out[(await row.getAttribute('data-format'))!] = { href: (await row.locator('a').getAttribute('href'))!, sha: (await row.getByTestId('sha256').textContent())!.trim() };
      }
      return out;
    };
    const before = await files();
    expect(Object.keys(before)).toEqual(expect.arrayContaining(['csv', 'fits', 'votable', 'json']));
    const csv1 = await fetchBytes(page, before.csv.href);
    const fits1 = await fetchBytes(page, before.fits.href);
    expect(sha(csv1)).toBe(before.csv.sha);
    expect(sha(fits1)).toBe(before.fits.sha);
    const live1 = await fetchBytes(page, `/api/campaigns/${demo.campaignId}/downloads/csv?status=accepted`);

    // After the release: five accepted stars re-fitted with another floor, one flagged star accepted.
    const keys = demo.run.app.db.$client
      .prepare("SELECT s.star_key FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? AND r.review_status = 'accepted' ORDER BY s.star_key LIMIT 5")
      .pluck()
      .all(batchId) as string[];
    const second = await refit(demo.run.app, demo.actor(demo.people.analyst.email), demo.campaignId, keys, { floorFraction: 0.05 });
    demo.run.app.db.$client.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE batch_id = ?").run(second);
    demo.run.app.db.$client.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE id = (SELECT id FROM fit_results WHERE batch_id = ? AND review_status = 'flagged' LIMIT 1)").run(batchId);

    await page.reload();
    const after = await files();
    expect(after).toEqual(before);
    const csv2 = await fetchBytes(page, after.csv.href);
    const fits2 = await fetchBytes(page, after.fits.href);
    expect(csv2.equals(csv1)).toBe(true);
    expect(fits2.equals(fits1)).toBe(true);
    // The live download did change.
    const live2 = await fetchBytes(page, `/api/campaigns/${demo.campaignId}/downloads/csv?status=accepted`);
    expect(live2.equals(live1)).toBe(false);
    await page.close();
  });
});
