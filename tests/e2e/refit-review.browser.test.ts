// In real Chromium against the built server: after a small zero-point change (Ks +0.6 %, an
// invented recalibration) the analyst re-fits the stale stars from the batches page, which first
// says how many reviewed fits the re-fit touches and what happens to them; the re-fit is one batch;
// afterwards the reviewer's decisions are still there, marked carried over with the old and new
// values, and the accepted catalogue has as many stars as before (decision record 0016).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { starterBandLibrary } from '../../src/core/bands';
import { updateZeroPoint } from '../../src/server/band-library';
import { decide } from '../../src/server/review';
import { LANTERNFIELD_STARS, fitIdOf } from '../../src/seed/review-stars';
import { createWorker } from '../../workers/runner';
import { type ReviewDemo, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
  // The reviewer decides on the other Lanternfield stars (Cindermoor is accepted by the seed): flags one, accepts the rest.
  for (const s of LANTERNFIELD_STARS) {
    if (s.starKey === 'Cindermoor') continue;
    const body = s.starKey === 'Harthglow' ? { decision: 'flagged', reason: 'ir_excess', comment: 'W3 and W4 high' } : { decision: 'accepted' };
    decide(demo.run.app.db, demo.actor(demo.people.reviewer.email), fitIdOf(demo.run.app.db, demo.batchId, s.starKey), body);
  }
  const ks = starterBandLibrary().bands.Ks.zeroPoint as { fLambdaCgs: number; relErr: number; source: string };
  updateZeroPoint(demo.run.app.db, demo.actor(demo.people.admin.email), 'Ks', { ...ks, fLambdaCgs: ks.fLambdaCgs * 1.006, source: 'Lanternfield recalibration (invented, +0.6 %)' }, 'Ks recalibration');
});
afterAll(() => demo?.stop());

const acceptedNow = () =>
  demo.run.app.db.$client.prepare("SELECT count(*) FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'accepted'").pluck().get(demo.campaignId) as number;

describe('re-fit after a zero-point change', () => {
  it('says what happens to reviewed fits, makes one batch, and keeps the unchanged decisions marked carried over', async () => {
    const reviewed = LANTERNFIELD_STARS.length;
    const acceptedBefore = acceptedNow();
    expect(acceptedBefore).toBe(reviewed - 1);
    const page = await demo.browser.context.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/batches`);
    const batchRows = await page.locator('[data-testid="batch-table"] tbody tr').count();
    const preview = page.getByTestId('refit-preview');
    await expect.poll(() => preview.textContent()).toMatch(new RegExp(`${reviewed}\\s+of them have a review decision\\s+\\(${reviewed - 1} accepted, 1 flagged\\)`));
    expect(await preview.textContent()).toMatch(/carries over[\s\S]*less than 0\.25σ/);
    await Promise.all([page.waitForURL(/\/batches\/[^/]+$/), page.getByTestId('refit-stale').click()]);
    // The worker fits the re-fit batch (in this process, on the server's database file).
    await createWorker(demo.run.app, { owner: 'e2e-refit', drain: true, idleMs: 5 }).run();
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/batches`);
    // One re-fit is one new batch in the list, holding every stale star.
    await expect.poll(() => page.locator('[data-testid="batch-table"] tbody tr').count()).toBe(batchRows + 1);
    expect(await page.locator('[data-testid="batch-table"] tbody tr').first().textContent()).toContain(`${reviewed} / ${reviewed}`);
    expect(acceptedNow()).toBe(acceptedBefore);

    await demo.signIn(page, 'reviewer');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/Harthglow`);
    const history = page.getByTestId('review-history');
    await history.waitFor();
    const current = history.locator('li[data-current="true"]');
    expect(await current.count()).toBe(1);
    expect(await current.getAttribute('data-reason')).toBe('ir_excess');
    expect(await current.getByTestId('carried-over').textContent()).toMatch(/Carried over from decision \d+ on fit \d+: Teff \d+ → \d+ K \(0\.\d\dσ\), θ [\d.]+ → [\d.]+ mas/);
    expect(await current.textContent()).toContain('W3 and W4 high');
    expect(await page.getByTestId('carryover-note').getAttribute('data-outcome')).toBe('carried');
    // Nothing waits on the review desk: every decision carried over.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    await expect.poll(() => page.getByTestId('queue-total').textContent(), { timeout: 15_000 }).toBe('(0)');
    await page.close();
  });
});
