// In real Chromium against the built server: the analyst signs in, creates a campaign and sees it
// listed; a guest collaborator cannot do the same; an invitation reaches the admin's outbox.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { eq } from 'drizzle-orm';
import { campaigns } from '../../src/db/schema';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { launchBrowser, signInWithForm, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
const people = demoUsers();

beforeAll(async () => {
  run = await startApp();
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

async function signIn(page: Page, who: keyof typeof people) {
  await signInWithForm(browser, page, run.baseUrl, people[who], { keepSession: true });
  await expect(page.getByTestId('signed-in-as').textContent()).resolves.toContain(people[who].name);
}

async function signOut(page: Page) {
  await Promise.all([page.waitForURL(/\/sign-in$/), page.getByRole('button', { name: 'Sign out' }).click()]);
}

describe('campaigns in the browser', () => {
  it('sends an anonymous visitor to sign-in and back afterwards', async () => {
    const page = await browser.newPage();
    await page.goto(`${run.baseUrl}/campaigns`);
    expect(new URL(page.url()).pathname).toBe('/sign-in');
    expect(new URL(page.url()).searchParams.get('next')).toBe('/campaigns');
    await page.getByLabel('E-mail').fill(people.analyst.email);
    await page.getByLabel('Password').fill('wrong-password-here');
    await page.getByRole('button', { name: 'Sign in' }).click();
    await expect(page.getByRole('alert').textContent()).resolves.toMatch(/do not match an account/);
    await page.close();
  });

  it('lets the analyst create a campaign and see it listed', async () => {
    const page = await browser.newPage();
    await signIn(page, 'analyst');
    const list = page.getByTestId('campaign-list');
    await expect(list.getByText(DEMO_CAMPAIGN.name).count()).resolves.toBe(1);

    // The island hydrates; wait for React to own the form before typing.
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    await page.getByLabel('Name').fill('Glassmere binaries');
    await page.getByLabel('Description').fill('Wide binaries of the invented Glassmere field.');
    await page.getByRole('button', { name: 'Create campaign' }).click();
    await page.getByRole('status').filter({ hasText: 'Created' }).waitFor();
    await expect(list.getByRole('link', { name: 'Glassmere binaries' }).count()).resolves.toBe(1);

    // The same name again is refused with a message at the field, and nothing is added.
    await page.getByLabel('Name').fill('glassmere   BINARIES');
    await page.getByRole('button', { name: 'Create campaign' }).click();
    await expect(page.locator('#campaign-name-error').textContent()).resolves.toMatch(/already exists/);
    expect(run.app.db.select().from(campaigns).where(eq(campaigns.name, 'Glassmere binaries')).all()).toHaveLength(1);

    // Listed after a full reload too (server-rendered from the database).
    await page.reload();
    await expect(page.getByTestId('campaign-list').getByRole('link', { name: 'Glassmere binaries' }).count()).resolves.toBe(1);

    // Open it: the analyst is its only member.
    await Promise.all([page.waitForURL(/\/campaigns\/[a-z0-9]+$/), page.getByRole('link', { name: 'Glassmere binaries' }).click()]);
    await expect(page.getByRole('heading', { level: 1 }).textContent()).resolves.toBe('Glassmere binaries');
    await expect(page.getByTestId('member-table').getByText(people.analyst.email).count()).resolves.toBe(1);
    await signOut(page);
    await page.close();
  });

  it('does not let a guest collaborator create a campaign', async () => {
    const page = await browser.newPage();
    await signIn(page, 'collaborator');
    await expect(page.getByTestId('campaign-list').getByText(DEMO_CAMPAIGN.name).count()).resolves.toBe(1);
    await expect(page.getByRole('button', { name: 'Create campaign' }).count()).resolves.toBe(0);
    await expect(page.getByText('Guest account').count()).resolves.toBe(1);

    // Even calling the API from the page (with the guest's session cookie) is refused.
    const answer = await page.evaluate(async () => {
      const res = await fetch('/api/campaigns', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ name: 'Guest sneaks in' }) });
      return { status: res.status, body: await res.json() };
    });
    expect(answer.status).toBe(403);
    expect(answer.body.error.message).toMatch(/Guest accounts cannot create campaigns/);
    expect(run.app.db.select().from(campaigns).where(eq(campaigns.name, 'Guest sneaks in')).all()).toHaveLength(0);

    // The admin area is closed to guests.
    const admin = await page.goto(`${run.baseUrl}/admin`);
    expect(admin?.status()).toBe(403);
    await signOut(page);
    await page.close();
  });

  it('delivers an invitation to the outbox, where the admin reads it', async () => {
    const page = await browser.newPage();
    await signIn(page, 'analyst');
    await Promise.all([page.waitForURL(/\/campaigns\/[a-z0-9]+$/), page.getByRole('link', { name: DEMO_CAMPAIGN.name }).click()]);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    await page.getByLabel('E-mail').fill('first.light@example.test');
    await page.getByRole('form', { name: 'Add someone' }).getByRole('checkbox', { name: /reviewer/ }).check();
    await page.getByRole('button', { name: 'Add to campaign' }).click();
    await page.getByRole('status').filter({ hasText: 'Invitation sent to first.light@example.test' }).waitFor();
    await expect(page.getByTestId('invitation-list').getByText('first.light@example.test').count()).resolves.toBe(1);
    await signOut(page);

    await signIn(page, 'admin');
    await page.goto(`${run.baseUrl}/admin/outbox?to=first.light@example.test`);
    await Promise.all([page.waitForURL(/\/admin\/outbox\/\d+$/), page.getByTestId('outbox-table').getByRole('link').first().click()]);
    await expect(page.getByTestId('outbox-to').textContent()).resolves.toBe('first.light@example.test');
    await expect(page.getByTestId('outbox-text').textContent()).resolves.toMatch(/\/sign-up\?invite=/);
    await page.close();
  });
});
