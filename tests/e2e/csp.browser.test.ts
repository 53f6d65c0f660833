// The Content-Security-Policy against what the pages really load, in Chromium: every page with an
// island or a Plotly figure is opened, its island must hydrate and draw, and the browser must report
// no CSP violation (securitypolicyviolation events, listened for before any page script runs, and
// console messages about the policy).
import { eq } from 'drizzle-orm';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { campaigns, user } from '../../src/db/schema';
import { toActor } from '../../src/server/context';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { makeFittedCatalogue } from '../factories-catalogue';
import { launchBrowser, signInCookie, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
let campaignId: string;
let starId: number;
const people = demoUsers();

beforeAll(async () => {
  run = await startApp();
  browser = await launchBrowser();
  campaignId = run.app.db.select().from(campaigns).where(eq(campaigns.name, DEMO_CAMPAIGN.name)).get()!.id;
  const analyst = toActor(run.app.db.select().from(user).where(eq(user.email, people.analyst.email)).get()!);
  await makeFittedCatalogue(run.app, analyst, campaignId, { count: 12, prefix: 'QCSP', seed: 5 });
  starId = run.app.db.$client.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key LIKE 'QCSP%' ORDER BY star_key LIMIT 1").pluck().get(campaignId) as number;
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

async function pageAs(who: keyof typeof people): Promise<{ page: Page; problems: string[] }> {
  const page = await browser.newPage();
  const cookie = await signInCookie(run.baseUrl, people[who].email, people[who].password);
  await page.context().addCookies(cookie.split('; ').map((c) => ({ name: c.split('=')[0], value: c.slice(c.indexOf('=') + 1), url: run.baseUrl })));
  const problems: string[] = [];
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => {
      const w = window as unknown as { __csp?: string[] };
      (w.__csp ??= []).push(`${e.violatedDirective} blocked ${e.blockedURI || 'inline'} at ${e.sourceFile}:${e.lineNumber}`);
    });
  });
  page.on('console', (m) => {
    if (/Content Security Policy|Refused to (execute|load|apply|evaluate)/i.test(m.text())) problems.push(`console: ${m.text()}`);
  });
  page.on('pageerror', (err) => problems.push(`page error: ${err.message}`));
  return { page, problems };
}

async function violations(page: Page): Promise<string[]> {
  return page.evaluate(() => (window as unknown as { __csp?: string[] }).__csp ?? []);
}

async function expectClean(page: Page, problems: string[], what: string) {
  // Let late scripts (Plotly's style injection, island effects) run.
  await page.waitForTimeout(500);
  expect([...(await violations(page)), ...problems], what).toEqual([]);
}

describe('Content-Security-Policy in Chromium', () => {
  it('campaign pages hydrate their islands and draw their Plotly figures with no violation', async () => {
    const { page, problems } = await pageAs('analyst');
    const visits: { path: string; ready: (p: Page) => Promise<unknown> }[] = [
      { path: '/campaigns', ready: (p) => p.locator('h1').waitFor() },
      { path: `/campaigns/${campaignId}`, ready: (p) => p.getByTestId('catalogue-link').waitFor() },
      { path: `/campaigns/${campaignId}/catalogue`, ready: (p) => p.getByTestId('catalogue-diagrams').locator('.js-plotly-plot').first().waitFor({ timeout: 30_000 }) },
      { path: `/campaigns/${campaignId}/stars/${starId}`, ready: (p) => p.locator('[data-testid="sed-plot"][data-ready="true"]').waitFor({ timeout: 30_000 }) },
      { path: `/campaigns/${campaignId}/review`, ready: (p) => p.getByTestId('review-desk').waitFor({ timeout: 30_000 }) },
      { path: `/campaigns/${campaignId}/intake`, ready: (p) => p.getByTestId('uppy-dashboard').waitFor({ timeout: 30_000 }) },
      { path: '/account/tokens', ready: (p) => p.waitForFunction(() => !document.querySelector('astro-island[ssr]'), undefined, { timeout: 30_000 }) },
    ];
    for (const v of visits) {
      const res = await page.goto(`${run.baseUrl}${v.path}`);
      expect(res?.status(), v.path).toBe(200);
      expect(res?.headers()['content-security-policy'], v.path).toMatch(/script-src 'self'/);
      await v.ready(page);
      await expectClean(page, problems, v.path);
    }
    // The token island works under the policy: make a token through it and see the secret.
    await page.locator('#token-name').fill('csp check');
    await page.getByRole('button', { name: 'Make token' }).click();
    await page.getByTestId('new-token-secret').waitFor({ timeout: 30_000 });
    await expectClean(page, problems, 'token made');
    await page.close();
  });

  it('the admin band page draws its passband curve with no violation', async () => {
    const { page, problems } = await pageAs('admin');
    const res = await page.goto(`${run.baseUrl}/admin/bands/V`);
    expect(res?.status()).toBe(200);
    await page.locator('[data-testid="band-curve-plot"][data-ready="true"]').waitFor({ timeout: 30_000 });
    await expectClean(page, problems, '/admin/bands/V');
    await page.close();
  });

  it('a script injected into a page is blocked and reported (the policy is enforced, not just sent)', async () => {
    const { page } = await pageAs('analyst');
    await page.goto(`${run.baseUrl}/campaigns`);
    const ran = await page.evaluate(async () => {
      const s = document.createElement('script');
      s.textContent = 'window.__injected = true;';
      document.body.appendChild(s);
      await new Promise((r) => setTimeout(r, 200));
      return (window as unknown as { __injected?: boolean }).__injected === true;
    });
    expect(ran).toBe(false);
    expect((await violations(page)).some((v) => v.startsWith('script-src'))).toBe(true);
    await page.close();
  });
});
