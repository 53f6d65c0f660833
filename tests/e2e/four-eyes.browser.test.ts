// In real Chromium against the built server: the four-eyes rule's switch. The analyst who started
// the batch whose fits wait for review is told she cannot switch the rule off; the reviewer can,
// with a reason, which the page then shows; a decision made while the rule is off is marked so in
// the star's review history; switching it back on needs no reason.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decide } from '../../src/server/review';
import { fitIdOf } from '../../src/seed/review-stars';
import { type ReviewDemo, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
});
afterAll(() => demo?.stop());

describe('the four-eyes switch', () => {
  it('is refused to the person it holds back, needs a reason from another member, and marks decisions made while it is off', async () => {
    const page = await demo.browser.context.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    expect(await page.getByTestId('four-eyes-refusal').textContent()).toMatch(/You started batch .* whose fits wait for review/);
    expect(await page.getByTestId('four-eyes-form').count()).toBe(0);

    await demo.signIn(page, 'reviewer');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    const reason = page.getByLabel('Why switch the four-eyes rule off?');
    // The browser keeps the form from going without a reason (required); the server refuses it too (unit tests).
    expect(await reason.getAttribute('required')).not.toBeNull();
    await reason.fill('Only one reviewer this week');
    await Promise.all([page.waitForLoadState('load'), page.getByRole('button', { name: 'Switch the rule off' }).click()]);
    await expect.poll(() => page.getByTestId('four-eyes-state').textContent()).toMatch(/off for this campaign/);
    expect(await page.getByTestId('four-eyes-reason').textContent()).toBe('Only one reviewer this week');
    const audit = demo.run.app.db.$client.prepare("SELECT actor_id AS actorId, details FROM audit_events WHERE action = 'review.four_eyes_off'").all() as { actorId: string; details: string }[];
    expect(audit).toEqual([{ actorId: demo.actor(demo.people.reviewer.email).id, details: JSON.stringify({ reason: 'Only one reviewer this week' }) }]);

    // A decision while the rule is off: marked in the star's history.
    decide(demo.run.app.db, demo.actor(demo.people.reviewer.email), fitIdOf(demo.run.app.db, demo.batchId, 'Tamsel Minor'), { decision: 'accepted' });
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/Tamsel%20Minor`);
    expect(await page.locator('[data-testid="review-history"] li[data-current="true"]').getByTestId('four-eyes-off-mark').textContent()).toMatch(/four-eyes rule was switched off/);

    // Back on, without a reason.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    await Promise.all([page.waitForLoadState('load'), page.getByRole('button', { name: 'Switch the four-eyes rule back on' }).click()]);
    await expect.poll(() => page.getByTestId('four-eyes-state').textContent()).toMatch(/^\s*Four-eyes rule on/);
    await page.close();
  });
});
