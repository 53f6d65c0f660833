// In real Chromium against the built server: the demo collaborator opens the catalogue of the demo
// campaign (real fits, partly accepted), downloads the CSV through the page's link, and its rows
// match the accepted fits in the database. Also over plain HTTP, as a script would: the first page
// is in the HTML (no JavaScript needed), and a personal API token works as a bearer token without
// cookie or Origin header, with its owner's roles, and stops working once revoked.
import { readFileSync } from 'node:fs';
import { parse as parseCsv } from 'csv-parse/sync';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_CAMPAIGN } from '../../src/seed/seed';
import { createApiToken, revokeApiToken } from '../../src/server/api-tokens';
import { makeFittedCatalogue } from '../factories-catalogue';
import { type DemoRun, signInCookie, startWithDemo } from './harness';

let demo: DemoRun;

beforeAll(async () => {
  demo = await startWithDemo();
  // Real fits of invented stars, drained by the worker loop in this process into the server's database.
  await makeFittedCatalogue(demo.run.app, demo.actor(demo.people.analyst.email), demo.campaignId, { count: 70, prefix: 'QE2E', seed: 17, noParallaxEvery: 9 });
});
afterAll(() => demo?.stop());

/** The accepted catalogue read straight from the database. */
function acceptedRows(): { id: string; teff_k: number | null; lum_lsun: number | null; flags: string }[] {
  return demo.run.app.db.$client
    .prepare(
      `SELECT s.star_key AS id, f.teff_k, f.lum_lsun, f.flags FROM fit_results f JOIN stars s ON s.id = f.star_id
       WHERE f.campaign_id = ? AND f.is_current = 1 AND f.review_status = 'accepted' ORDER BY s.star_key`,
    )
    .all(demo.campaignId) as { id: string; teff_k: number | null; lum_lsun: number | null; flags: string }[];
}

function compareCsv(csv: string) {
  expect(csv.startsWith('# campaign: ')).toBe(true);
  const records = parseCsv(csv, { comment: '#', columns: true }) as Record<string, string>[];
  const want = acceptedRows();
  expect(want.length).toBeGreaterThan(30);
  expect(records.map((r) => r.id)).toEqual(want.map((r) => r.id));
  records.forEach((r, i) => {
    // teff_k is written to 6 significant digits, lum_lsun to 5 (src/core/catalogue.ts).
    expect(Math.abs(Number(r.teff_k) - want[i].teff_k!)).toBeLessThanOrEqual(want[i].teff_k! * 5e-6);
    if (want[i].lum_lsun === null) expect(r.lum_lsun).toBe('');
    else expect(Math.abs(Number(r.lum_lsun) - want[i].lum_lsun!)).toBeLessThanOrEqual(want[i].lum_lsun! * 5e-5);
    expect(r.flags).toBe(want[i].flags);
    expect(r.review_status).toBe('accepted');
  });
}

describe('catalogue in the browser', () => {
  it('lets the demo collaborator open the catalogue and download the accepted CSV through the page link', async () => {
    const page = await demo.browser.newPage();
    await page.goto(`${demo.run.baseUrl}/sign-in`);
    await page.getByLabel('E-mail').fill(demo.people.collaborator.email);
    await page.getByLabel('Password').fill(demo.people.collaborator.password);
    await Promise.all([page.waitForURL(`${demo.run.baseUrl}/campaigns`), page.getByRole('button', { name: 'Sign in' }).click()]);
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}`);
    await Promise.all([page.waitForURL(/\/catalogue$/), page.getByTestId('catalogue-link').click()]);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    const want = acceptedRows();
    await expect(page.getByTestId('catalogue-count').textContent()).resolves.toContain(`${want.length} of`);
    await expect(page.getByTestId('catalogue-table').locator('tbody tr').count()).resolves.toBe(Math.min(50, want.length));
    // The diagrams island draws (Plotly, in the browser).
    await page.getByTestId('catalogue-diagrams').waitFor();

    const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId('download-csv').click()]);
    expect(download.suggestedFilename()).toMatch(/-catalogue-\d{4}-\d\d-\d\d\.csv$/);
    compareCsv(readFileSync((await download.path())!, 'utf8'));
    await page.close();
  });

  it('opens the star sheet from a row of the table and from a point of the temperature–luminosity diagram', async () => {
    const page = await demo.browser.newPage();
    const cookie = await signInCookie(demo.run.baseUrl, demo.people.collaborator.email, demo.people.collaborator.password);
    await page.context().addCookies(cookie.split('; ').map((c) => ({ name: c.split('=')[0], value: c.slice(c.indexOf('=') + 1), url: demo.run.baseUrl })));
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue?sort=star_key`);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    const first = acceptedRows()[0].id;
    const starIdOf = (key: string) => demo.run.app.db.$client.prepare('SELECT id FROM stars WHERE campaign_id = ? AND star_key = ?').pluck().get(demo.campaignId, key) as number;
    const link = page.getByTestId('catalogue-table').getByRole('link', { name: first, exact: true });
    await expect(link.getAttribute('href')).resolves.toBe(`/campaigns/${demo.campaignId}/stars/${starIdOf(first)}`);
    await Promise.all([page.waitForURL(new RegExp(`/stars/${starIdOf(first)}$`)), link.click()]);
    await expect(page.locator('h1').textContent()).resolves.toContain(first);

    // The diagram's points are the accepted stars with a luminosity, each carrying its star id;
    // a click on one (Plotly's click event, as a mouse click on the point sends it) opens its sheet.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue`);
    const plot = page.getByTestId('catalogue-diagrams').locator('.js-plotly-plot').first();
    await plot.waitFor();
    const ids = (await plot.evaluate((el) => (el as unknown as { data: { customdata?: number[] }[] }).data.flatMap((tr) => tr.customdata ?? []))) as number[];
    const want = demo.run.app.db.$client
      .prepare("SELECT star_id FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'accepted' AND lum_lsun > 0 ORDER BY star_id")
      .pluck()
      .all(demo.campaignId) as number[];
    expect(want.length).toBeGreaterThan(20);
    expect([...ids].sort((a, b) => a - b)).toEqual(want);
    const target = ids[ids.length - 1];
    const key = demo.run.app.db.$client.prepare('SELECT star_key FROM stars WHERE id = ?').pluck().get(target) as string;
    await Promise.all([
      page.waitForURL(new RegExp(`/stars/${target}$`)),
      plot.evaluate((el, id) => (el as unknown as { emit: (name: string, ev: unknown) => void }).emit('plotly_click', { points: [{ customdata: id, x: 0, y: 0 }] }), target),
    ]);
    await expect(page.locator('h1').textContent()).resolves.toContain(key);

    // A bar of the Teff histogram lists its stars: the table filtered to the bar's Teff range.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue`);
    const histogram = page.getByTestId('catalogue-diagrams').locator('.js-plotly-plot').nth(1);
    await histogram.waitFor();
    const bars = (await histogram.evaluate((el) => {
      const tr = (el as unknown as { data: { x: number[]; y: number[] }[] }).data[0];
      return tr.x.map((x, i) => ({ x, n: tr.y[i] }));
    })) as { x: number; n: number }[];
    const bar = bars.reduce((a, b) => (b.n > a.n ? b : a));
    expect(bar.n).toBeGreaterThan(0);
    await Promise.all([
      page.waitForURL(/teffMin=\d+&teffMax=\d+/),
      histogram.evaluate((el, x) => (el as unknown as { emit: (name: string, ev: unknown) => void }).emit('plotly_click', { points: [{ x, y: 0 }] }), bar.x),
    ]);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    await expect(page.getByTestId('catalogue-count').textContent()).resolves.toContain(`${bar.n} of`);
    await page.close();
  });

  it('sorts and filters on the server when the reader clicks a header and applies a filter', async () => {
    const page = await demo.browser.newPage();
    const cookie = await signInCookie(demo.run.baseUrl, demo.people.collaborator.email, demo.people.collaborator.password);
    await page.context().addCookies(cookie.split('; ').map((c) => ({ name: c.split('=')[0], value: c.slice(c.indexOf('=') + 1), url: demo.run.baseUrl })));
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue`);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    await page.getByTestId('catalogue-table').getByRole('link', { name: 'Star', exact: true }).click();
    await page.waitForURL(/sort=star_key/);
    const first = acceptedRows()[0].id;
    // The island changes the URL before its next page arrives: wait for the re-rendered rows.
    const firstCell = () => document.querySelector('[data-testid="catalogue-table"] tbody tr td')?.textContent;
    await page.waitForFunction((id) => document.querySelector('[data-testid="catalogue-table"] tbody tr td')?.textContent === id, first, { timeout: 15_000 }).catch(() => undefined);
    await expect(page.evaluate(firstCell)).resolves.toBe(first);
    await page.getByLabel('Star id starts with').fill(first);
    await page.getByRole('button', { name: 'Apply' }).click();
    await page.waitForURL(new RegExp(`q=${first}`));
    await page.waitForFunction(() => document.querySelectorAll('[data-testid="catalogue-table"] tbody tr').length === 1, undefined, { timeout: 15_000 }).catch(() => undefined);
    await expect(page.getByTestId('catalogue-table').locator('tbody tr').count()).resolves.toBe(1);
    // The download link follows the filter.
    await expect(page.getByTestId('download-csv').getAttribute('href')).resolves.toContain(`q=${first}`);
    await page.close();
  });
});

describe('catalogue over HTTP, as a script', () => {
  it('renders the first page into the HTML (no JavaScript needed)', async () => {
    const cookie = await signInCookie(demo.run.baseUrl, demo.people.collaborator.email, demo.people.collaborator.password);
    const res = await fetch(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/catalogue?sort=star_key`, { headers: { cookie } });
    expect(res.status).toBe(200);
    const html = await res.text();
    for (const r of acceptedRows().slice(0, 5)) expect(html).toContain(`>${r.id}</a>`);
  });

  it('makes and revokes a token through the account page forms (no JavaScript), showing the secret once', async () => {
    const cookie = await signInCookie(demo.run.baseUrl, demo.people.reviewer.email, demo.people.reviewer.password);
    const form = (fields: Record<string, string>) =>
      fetch(`${demo.run.baseUrl}/account/tokens`, { method: 'POST', headers: { cookie, origin: demo.run.baseUrl, 'content-type': 'application/x-www-form-urlencoded' }, body: new URLSearchParams(fields).toString() });
    const made = await form({ action: 'create', name: 'form token', expiresInDays: '' });
    expect(made.status).toBe(200);
    const html = await made.text();
    const secret = /data-testid="new-token-secret"[^>]*>(sk_[A-Za-z0-9_-]+)</.exec(html)?.[1];
    expect(secret).toBeDefined();
    const again = await (await fetch(`${demo.run.baseUrl}/account/tokens`, { headers: { cookie } })).text();
    expect(again).toContain('form token');
    expect(again).not.toContain(secret!);
    expect((await fetch(`${demo.run.baseUrl}/api/me`, { headers: { authorization: `Bearer ${secret}` } })).status).toBe(200);
    const id = demo.run.app.db.$client.prepare("SELECT id FROM api_tokens WHERE name = 'form token'").pluck().get() as string;
    expect((await form({ action: 'revoke', tokenId: id })).status).toBe(200);
    expect((await fetch(`${demo.run.baseUrl}/api/me`, { headers: { authorization: `Bearer ${secret}` } })).status).toBe(401);
  });

  it('accepts a personal API token as a bearer token without cookie or Origin, with the owner’s roles, until it is revoked', async () => {
    const collaborator = demo.actor(demo.people.collaborator.email);
    const { token, secret } = createApiToken(demo.run.app.db, collaborator, { name: 'e2e script' });
    const auth = { authorization: `Bearer ${secret}` };
    const csv = await fetch(`${demo.run.baseUrl}/api/campaigns/${demo.campaignId}/downloads/csv?status=accepted`, { headers: auth });
    expect(csv.status).toBe(200);
    expect(csv.headers.get('content-disposition')).toMatch(/^attachment; filename=".+\.csv"$/);
    compareCsv(await csv.text());
    // A collaborator's token cannot release; an analyst's can, posting JSON with no cookie and no Origin.
    const post = (headers: Record<string, string>) =>
      fetch(`${demo.run.baseUrl}/api/campaigns/${demo.campaignId}/releases`, { method: 'POST', headers: { ...headers, 'content-type': 'application/json' }, body: JSON.stringify({ title: 'Scripted release' }) });
    expect((await post(auth)).status).toBe(403);
    const analystToken = createApiToken(demo.run.app.db, demo.actor(demo.people.analyst.email), { name: 'release script' });
    const released = await post({ authorization: `Bearer ${analystToken.secret}` });
    expect(released.status).toBe(201);
    const outbox = demo.run.app.db.$client.prepare("SELECT to_address FROM outbox_messages WHERE subject = ?").pluck().all(`Catalogue released: Scripted release (${DEMO_CAMPAIGN.name})`);
    expect(outbox).toContain(demo.people.collaborator.email);

    revokeApiToken(demo.run.app.db, collaborator, token.id);
    const refused = await fetch(`${demo.run.baseUrl}/api/campaigns/${demo.campaignId}/catalogue`, { headers: auth });
    expect(refused.status).toBe(401);
    expect(((await refused.json()) as { error: { message: string } }).error.message).toMatch(/revoked/);
    const unknown = await fetch(`${demo.run.baseUrl}/api/campaigns/${demo.campaignId}/catalogue`, { headers: { authorization: 'Bearer sk_not-a-real-token' } });
    expect(unknown.status).toBe(401);
    // The OpenAPI description is served to anyone.
    const doc = await fetch(`${demo.run.baseUrl}/api/openapi.json`);
    expect(doc.status).toBe(200);
    expect(((await doc.json()) as { openapi: string }).openapi).toBe('3.1.0');
  });
});
