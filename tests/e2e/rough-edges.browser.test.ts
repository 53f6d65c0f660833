// In real Chromium against the built server, on the demo: the small things a walk-through found.
// The batch page drops "Cancel this batch" when the batch ends, without a reload; the batch form
// names a star missing from the campaign in plain words; the token page's example runs as shown (a
// real campaign id, no placeholder) and its copy buttons copy; the catalogue's figures have no
// "Share chart" button and the histogram of a small catalogue has about √n bars counted in whole
// stars; an invitation's link in the outbox is a link that opens the sign-up page for it.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { startBatch } from '../../src/server/batches';
import { createWorker } from '../../workers/runner';
import { type ReviewDemo, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
});
afterAll(() => demo?.stop());

const hydrated = (page: Page) => page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));

describe('rough edges', () => {
  it('drops the cancel button once the batch has ended, without a reload', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    // No worker runs beside this server: the batch waits until this test fits it.
    const keys = demo.run.app.db.$client.prepare('SELECT star_key FROM stars WHERE campaign_id = ? ORDER BY id LIMIT 3').pluck().all(demo.campaignId) as string[];
    const batch = startBatch(demo.run.app, demo.actor(demo.people.analyst.email), demo.campaignId, { options: {}, starKeys: keys });
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/batches/${batch.id}`);
    await hydrated(page);
    await page.getByTestId('cancel-form').getByRole('button', { name: 'Cancel this batch' }).waitFor();
    await createWorker(demo.run.app, { owner: 'rough-edges', drain: true, idleMs: 5 }).run();
    // The page polls the batch's progress; when it reads "finished" the form goes.
    await page.getByText('Progress — finished').waitFor({ timeout: 60_000 });
    await expect(page.getByTestId('cancel-form').count()).resolves.toBe(0);
    await page.close();
  });

  it('names a star id missing from the campaign in plain words beside the star list', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/batches`);
    await hydrated(page);
    await page.getByLabel(/Only these stars/).fill('Nobody-Such');
    await page.getByRole('button', { name: 'Start the batch' }).click();
    const said = page.locator('#batch-stars ~ .field-error');
    await said.waitFor();
    await expect(said.textContent()).resolves.toBe('1 star id is not in this campaign: "Nobody-Such".');
    await page.close();
  });

  it('gives a token example that runs as shown, and copy buttons that copy', async () => {
    await demo.browser.context.grantPermissions(['clipboard-read', 'clipboard-write'], { origin: demo.run.baseUrl });
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'collaborator');
    await page.goto(`${demo.run.baseUrl}/account/tokens`);
    await hydrated(page);
    await page.getByLabel('Name').fill('nightly pull');
    await page.getByRole('button', { name: 'Make token' }).click();
    const secret = (await page.getByTestId('new-token-secret').textContent())!.trim();
    const curl = (await page.getByTestId('token-curl').textContent())!;
    expect(curl).not.toContain('CAMPAIGN_ID');
    expect(curl).toContain(`/api/campaigns/${demo.campaignId}/downloads/csv?status=accepted`);
    await page.getByTestId('copy-token').click();
    await page.getByText('Copied.').first().waitFor();
    await expect(page.evaluate(() => navigator.clipboard.readText())).resolves.toBe(secret);
    await page.getByTestId('copy-curl').click();
    await expect.poll(() => page.evaluate(() => navigator.clipboard.readText())).toBe(curl);
    // The command as shown downloads the catalogue (the same request curl makes).
    const url = /"(http[^"]+)"/.exec(curl)![1];
    const res = await fetch(url, { headers: { authorization: `Bearer ${secret}` } });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/text\/csv/);
    await page.close();
  });

  it('draws no share button, and a histogram of about √n bars counted in whole stars', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'reviewer');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue`);
    await page.locator('[data-testid="catalogue-diagrams"] .js-plotly-plot').nth(1).waitFor();
    await expect(page.locator('.modebar-btn[data-title^="Share"]').count()).resolves.toBe(0);
    await expect(page.locator('.modebar-btn').count()).resolves.toBeGreaterThan(0);
    const histogram = await page.evaluate(() => {
      const el = document.querySelectorAll('[data-testid="catalogue-diagrams"] .js-plotly-plot')[1] as unknown as { data: { y: number[] }[] };
      const ticks = [...document.querySelectorAll('[data-testid="catalogue-diagrams"] .js-plotly-plot')[1].querySelectorAll('.ytick text')].map((t) => t.textContent ?? '');
      return { counts: Array.from(el.data[0].y), ticks };
    });
    const n = histogram.counts.reduce((a, b) => a + b, 0);
    expect(n).toBeGreaterThan(0);
    expect(histogram.counts.length).toBeLessThanOrEqual(Math.ceil(Math.sqrt(n)));
    expect(histogram.ticks.length).toBeGreaterThan(1);
    for (const t of histogram.ticks) expect(t.replace(/,/g, ''), `tick "${t}"`).toMatch(/^\d+$/);
    await page.close();
  });

  it("makes an invitation's link in the outbox a link to its sign-up page", async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}`);
    await hydrated(page);
    await page.getByLabel('E-mail').fill('second.light@example.test');
    await page.getByRole('form', { name: 'Add someone' }).getByRole('checkbox', { name: /reviewer/ }).check();
    await page.getByRole('button', { name: 'Add to campaign' }).click();
    await page.getByRole('status').filter({ hasText: 'Invitation sent to second.light@example.test' }).waitFor();

    await demo.signIn(page, 'admin');
    await page.goto(`${demo.run.baseUrl}/admin/outbox?to=second.light@example.test`);
    await Promise.all([page.waitForURL(/\/admin\/outbox\/\d+$/), page.getByTestId('outbox-table').getByRole('link').first().click()]);
    const link = page.getByTestId('outbox-link').first();
    await expect(link.getAttribute('href')).resolves.toMatch(/\/sign-up\?invite=/);
    await demo.browser.context.clearCookies();
    await Promise.all([page.waitForURL(/\/sign-up\?invite=/), link.click()]);
    await expect(page.getByLabel('E-mail', { exact: true }).inputValue()).resolves.toBe('second.light@example.test');
    await page.close();
  });
});
