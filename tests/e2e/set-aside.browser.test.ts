// In real Chromium against the built server, on the demo with its review material: the analyst
// sets one value of a star aside from the star sheet (with a reason), sees it marked with who, when
// and why and that it takes effect at the next fit, finds it in the database and the audit trail,
// and uses it again; a reviewer sees the marks but gets no switch. (What the next fit does with a
// set-aside value is tested on the worker path in tests/measurement-use.test.ts.)
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { eq } from 'drizzle-orm';
import { campaigns, user } from '../../src/db/schema';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { nameKey } from '../../src/server/campaigns';
import { seedReviewDemo } from '../../src/seed/review-stars';
import { launchBrowser, signInWithForm, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
let campaignId: string;
const people = demoUsers();

beforeAll(async () => {
  run = await startApp();
  browser = await launchBrowser();
  campaignId = run.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
  const actor = (email: string) => {
    const u = run.app.db.select().from(user).where(eq(user.email, email)).get()!;
    return { id: u.id, name: u.name, email: u.email, kind: u.kind };
  };
  await seedReviewDemo(run.app, actor(people.analyst.email), actor(people.reviewer.email), campaignId);
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

const signIn = (page: Page, who: keyof typeof people) => signInWithForm(browser, page, run.baseUrl, people[who]);

describe('setting a value aside on the star sheet', () => {
  it('marks it with who, when and why, says it takes effect at the next fit, and undoes it', async () => {
    const page = await browser.newPage();
    await signIn(page, 'analyst');
    const sqlite = run.app.db.$client;
    const starId = sqlite.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Orrowind'").pluck().get(campaignId) as number;
    const j = sqlite.prepare("SELECT id, source FROM measurements WHERE star_id = ? AND band_key = 'J'").get(starId) as { id: number; source: string };
    await page.goto(`${run.baseUrl}/campaigns/${campaignId}/stars/${starId}`);
    const row = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await expect(row.getAttribute('data-in-fit')).resolves.toBe('used');
    await expect(row.getAttribute('data-set-aside')).resolves.toBe('false');

    await row.getByText('Set aside…').click();
    await row.getByLabel('Why (kept with the value)').fill('J is 0.45 mag off the curve; the 2MASS match is doubtful');
    await Promise.all([page.waitForLoadState('load'), row.getByRole('button', { name: 'Set aside' }).click()]);
    await page.getByTestId('set-aside-notice').waitFor();
    await expect(page.getByTestId('set-aside-notice').textContent()).resolves.toMatch(/the next fit of this star leaves it out/);
    const after = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await expect(after.getAttribute('data-set-aside')).resolves.toBe('true');
    const mark = await after.getByTestId('set-aside-mark').textContent();
    expect(mark).toContain(people.analyst.name);
    expect(mark).toContain('“J is 0.45 mag off the curve; the 2MASS match is doubtful”');
    await after.getByTestId('changed-since-fit').waitFor();
    // The newest fit was made before: it still shows the value as used.
    await expect(after.getAttribute('data-in-fit')).resolves.toBe('used');

    const stored = sqlite.prepare('SELECT set_aside_at IS NOT NULL AS aside, set_aside_reason AS reason FROM measurements WHERE id = ?').get(j.id);
    expect(stored).toEqual({ aside: 1, reason: 'J is 0.45 mag off the curve; the 2MASS match is doubtful' });
    const audited = sqlite.prepare("SELECT details FROM audit_events WHERE action = 'photometry.set_aside' AND campaign_id = ?").pluck().all(campaignId) as string[];
    expect(audited.map((d) => JSON.parse(d) as Record<string, unknown>)).toEqual([
      { reason: 'J is 0.45 mag off the curve; the 2MASS match is doubtful', count: 1, values: [{ id: j.id, star: 'Orrowind', band: 'J', source: j.source }] },
    ]);

    // A reviewer sees the mark but has no switch.
    await signIn(page, 'reviewer');
    await page.goto(`${run.baseUrl}/campaigns/${campaignId}/stars/${starId}`);
    const seen = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await seen.getByTestId('set-aside-mark').waitFor();
    await expect(seen.getByRole('button').count()).resolves.toBe(0);

    // The analyst uses it again.
    await signIn(page, 'analyst');
    await page.goto(`${run.baseUrl}/campaigns/${campaignId}/stars/${starId}`);
    await Promise.all([page.waitForLoadState('load'), page.locator(`tr[data-measurement="${j.id}"]`).getByRole('button', { name: 'Use again in fits' }).click()]);
    await page.getByTestId('set-aside-notice').waitFor();
    await expect(page.locator(`tr[data-measurement="${j.id}"]`).getAttribute('data-set-aside')).resolves.toBe('false');
    await expect(page.locator(`tr[data-measurement="${j.id}"]`).getByTestId('changed-since-fit').count()).resolves.toBe(0);
    expect(sqlite.prepare('SELECT set_aside_at FROM measurements WHERE id = ?').pluck().get(j.id)).toBeNull();
    expect(sqlite.prepare("SELECT count(*) FROM audit_events WHERE action = 'photometry.used_again' AND campaign_id = ?").pluck().get(campaignId)).toBe(1);
    await page.close();
  });
});
