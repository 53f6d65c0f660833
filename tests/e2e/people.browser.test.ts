// In real Chromium against the built server, on the demo campaign: its analyst changes a member's
// roles, is refused removing the campaign's last analyst (themself), removes a collaborator,
// invites an address and revokes the invitation (its link then says so), and archives and restores
// the campaign; the admin, a member of no campaign, sees every campaign in the list.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { eq } from 'drizzle-orm';
import { campaigns, user } from '../../src/db/schema';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { nameKey } from '../../src/server/campaigns';
import { makeCampaign } from '../../src/seed/factories';
import { launchBrowser, signInWithForm, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
let campaignId: string;
const people = demoUsers();
const signIn = (page: Page, who: keyof typeof people) => signInWithForm(browser, page, run.baseUrl, people[who]);
const hydrated = (page: Page) => page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
const userId = (email: string) => run.app.db.select().from(user).where(eq(user.email, email)).get()!.id;
const rolesOf = (email: string) =>
  run.app.db.$client.prepare('SELECT role FROM campaign_member_roles WHERE campaign_id = ? AND user_id = ? ORDER BY role').pluck().all(campaignId, userId(email)) as string[];

beforeAll(async () => {
  run = await startApp();
  browser = await launchBrowser();
  campaignId = run.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

/** Submits a form of the member table and waits for the page's answer. */
async function post(page: Page, click: () => Promise<void>) {
  await Promise.all([page.waitForLoadState('load'), page.waitForResponse((r) => r.request().method() === 'POST'), click()]);
  await hydrated(page);
}

describe('people of a campaign', () => {
  it('changes roles, keeps the last analyst, removes a member, revokes an invitation, archives and restores', async () => {
    const page = await browser.newPage();
    await signIn(page, 'analyst');
    await page.goto(`${run.baseUrl}/campaigns/${campaignId}`);
    await hydrated(page);

    // The reviewer also becomes an analyst.
    const reviewerForm = page.getByTestId(`member-form-${people.reviewer.email}`);
    await reviewerForm.getByRole('checkbox', { name: 'analyst' }).check();
    await post(page, () => reviewerForm.getByRole('button', { name: 'Save roles' }).click());
    await page.getByRole('status').filter({ hasText: 'now has the roles analyst, reviewer' }).waitFor();
    expect(rolesOf(people.reviewer.email)).toEqual(['analyst', 'reviewer']);
    // …and back: the analyst is then the only analyst again.
    await page.getByTestId(`member-form-${people.reviewer.email}`).getByRole('checkbox', { name: 'analyst' }).uncheck();
    await post(page, () => page.getByTestId(`member-form-${people.reviewer.email}`).getByRole('button', { name: 'Save roles' }).click());
    expect(rolesOf(people.reviewer.email)).toEqual(['reviewer']);

    // The last analyst cannot be removed.
    await post(page, () => page.getByTestId(`member-form-${people.analyst.email}`).getByRole('button', { name: 'Remove' }).click());
    await page.getByRole('alert').filter({ hasText: 'is the last analyst of this campaign' }).waitFor();
    expect(rolesOf(people.analyst.email)).toContain('analyst');

    // The collaborator is removed.
    await post(page, () => page.getByTestId(`member-form-${people.collaborator.email}`).getByRole('button', { name: 'Remove' }).click());
    await page.getByRole('status').filter({ hasText: 'The member was removed' }).waitFor();
    await expect(page.getByTestId('member-table').getByText(people.collaborator.email).count()).resolves.toBe(0);
    expect(rolesOf(people.collaborator.email)).toEqual([]);

    // An invitation is listed and revoked; its link then says it no longer works.
    await page.getByLabel('E-mail').fill('late.comer@example.test');
    await page.getByRole('button', { name: 'Add to campaign' }).click();
    await page.getByRole('status').filter({ hasText: 'Invitation sent to late.comer@example.test' }).waitFor();
    await page.getByTestId('invitation-list').getByText('late.comer@example.test').waitFor();
    const mail = run.app.db.$client.prepare("SELECT text_body FROM outbox_messages WHERE to_address = 'late.comer@example.test' ORDER BY id DESC LIMIT 1").pluck().get() as string;
    const link = /http\S+\/sign-up\?invite=\S+/.exec(mail)![0];
    await page.reload();
    await hydrated(page);
    await post(page, () => page.getByRole('button', { name: 'Revoke the invitation of late.comer@example.test' }).click());
    await page.getByRole('status').filter({ hasText: 'The invitation was revoked' }).waitFor();
    await expect(page.getByText('late.comer@example.test').count()).resolves.toBe(0);

    // Archived, then restored.
    await post(page, () => page.getByRole('button', { name: 'Archive the campaign' }).click());
    await page.getByRole('status').filter({ hasText: 'The campaign is archived' }).waitFor();
    expect(run.app.db.$client.prepare('SELECT archived_at IS NOT NULL FROM campaigns WHERE id = ?').pluck().get(campaignId)).toBe(1);
    await post(page, () => page.getByRole('button', { name: 'Restore the campaign' }).click());
    await page.getByRole('status').filter({ hasText: 'The campaign is restored' }).waitFor();
    expect(run.app.db.$client.prepare('SELECT archived_at FROM campaigns WHERE id = ?').pluck().get(campaignId)).toBeNull();

    // The revoked invitation's link, opened by the person invited (signed out), says it no longer works.
    await browser.context.clearCookies();
    await page.goto(link.replace(/^http:\/\/[^/]+/, run.baseUrl));
    await page.getByText('This invitation link has been used or has expired.').waitFor();
    await page.close();
  });

  it('shows the admin every campaign, also those they are no member of', async () => {
    const analyst = run.app.db.select().from(user).where(eq(user.email, people.analyst.email)).get()!;
    const other = makeCampaign(run.app, { id: analyst.id, name: analyst.name, email: analyst.email, kind: analyst.kind }, { name: 'Duskmere follow-up' });
    const page = await browser.newPage();
    await signIn(page, 'admin');
    await page.goto(`${run.baseUrl}/campaigns`);
    await hydrated(page);
    await page.getByRole('link', { name: DEMO_CAMPAIGN.name }).waitFor();
    await page.getByRole('link', { name: 'Duskmere follow-up' }).waitFor();
    await expect(page.getByText('No campaigns yet').count()).resolves.toBe(0);
    await page.goto(`${run.baseUrl}/campaigns/${other.id}`);
    await expect(page.getByRole('heading', { level: 1 }).textContent()).resolves.toContain('Duskmere follow-up');
    await page.close();
  });
});
