// In real Chromium against the built server: an admin adds a band from a curve file through the
// band library pages, sees the parsed curve's pivot wavelength before saving (synphot's value for
// the same curve is in fixtures/bands/pivots.json), then the saved band and its new version; a bad
// file is refused with its line named. Over HTTP through the real middleware: a deactivated
// person's session cookie and API token stop working.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { demoUsers } from '../../src/seed/seed';
import { projectRoot } from '../../src/db/paths';
import { callApi, launchBrowser, signInCookie, signInWithForm, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
const people = demoUsers();
const fixtures = path.join(projectRoot(), 'fixtures/bands');
const pivots = JSON.parse(readFileSync(path.join(fixtures, 'pivots.json'), 'utf8')) as { curves: { file: string; pivotAngstromFine: number }[] };

beforeAll(async () => {
  run = await startApp();
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

// The browser context keeps its cookie between tests: already signed in, sign-in sends us on.
const signIn = (page: Page, who: keyof typeof people) => signInWithForm(browser, page, run.baseUrl, people[who], { keepSession: true });

describe('band library in the browser', () => {
  it('an admin adds a band from an energy-type curve file in µm and sees its pivot before and after saving', async () => {
    const page = await browser.newPage();
    await signIn(page, 'admin');
    await page.goto(`${run.baseUrl}/admin/bands`);
    await expect(page.getByTestId('current-version').textContent()).resolves.toBe('starter-1');
    await expect(page.getByTestId('band-table').locator('tr[data-band="V"]').textContent()).resolves.toMatch(/5477\.2/);
    await page.getByTestId('add-band').click();
    await page.waitForURL(`${run.baseUrl}/admin/bands/new`);
    await page.locator('#curveFile').waitFor();

    // A bad file first: the wavelengths go back on line 3; nothing can be saved.
    await page.getByLabel('Wavelength unit in the file').selectOption('angstrom');
    await page.locator('#curveFile').setInputFiles({ name: 'broken.txt', mimeType: 'text/plain', buffer: Buffer.from('5000 0\n5100 1\n5050 1\n5200 0\n') });
    await expect(page.getByTestId('curve-error').textContent()).resolves.toMatch(/broken\.txt, line 3, column 1 .*goes back from 5100 Å/);
    await expect(page.getByRole('button', { name: 'Add the band' }).isDisabled()).resolves.toBe(true);

    // The real file: energy-type, wavelengths in µm.
    await page.getByLabel('Wavelength unit in the file').selectOption('um');
    await page.getByLabel('energy-type').check();
    await page.locator('#curveFile').setInputFiles(path.join(fixtures, 'lanternfield-y.txt'));
    const expected = pivots.curves.find((c) => c.file === 'lanternfield-y.txt')!.pivotAngstromFine;
    const shown = Number((await page.getByTestId('preview-pivot').textContent())!.replace(/[^\d.]/g, ''));
    // synphot's pivot for this curve (energy-type divided by λ), within 2 Å.
    expect(Math.abs(shown - expected)).toBeLessThan(2);
    await page.locator('[data-testid="curve-preview"] [data-testid="band-curve-plot"][data-ready="true"]').waitFor();

    await page.getByLabel('Key (column name in tables, case-sensitive)').fill('Ly');
    await page.getByLabel('Name', { exact: true }).fill('Lanternfield y');
    await page.getByLabel('System or instrument family').fill('Lanternfield Survey camera');
    await page.getByLabel('Magnitudes are').selectOption('ab');
    await page.getByLabel('Where the curve was published').fill('Invented test band of the Lanternfield Survey');
    await page.getByLabel('Reason for adding it (kept with the new version)').fill('The survey camera y band');
    await Promise.all([page.waitForURL(/\/admin\/bands\/Ly\?saved=v2$/), page.getByRole('button', { name: 'Add the band' }).click()]);

    await expect(page.getByRole('status').textContent()).resolves.toMatch(/Saved as band library version v2/);
    await expect(page.getByTestId('band-pivot').textContent()).resolves.toBe(`${shown.toFixed(1)} Å`);
    await expect(page.getByTestId('band-zero-point').textContent()).resolves.toMatch(/F_ν,0 = 3631 Jy/);
    await expect(page.getByTestId('band-history').textContent()).resolves.toMatch(/v2.*The survey camera y band/s);
    await page.locator('[data-testid="band-curve-plot"][data-ready="true"]').waitFor();
    await page.goto(`${run.baseUrl}/admin/bands`);
    await expect(page.getByTestId('current-version').textContent()).resolves.toBe('v2');
    await expect(page.getByTestId('band-table').locator('tr[data-band="Ly"]').textContent()).resolves.toMatch(/Lanternfield y/);
    await page.close();
  });

  it('an admin changes a zero-point with a reason; the old version still shows the old value', async () => {
    const page = await browser.newPage();
    await signIn(page, 'admin');
    await page.goto(`${run.baseUrl}/admin/bands/H`);
    await page.getByTestId('zero-point-form').waitFor();
    await expect(page.locator('label[for="zpValue"]').textContent()).resolves.toBe('F_λ,0 (erg s⁻¹ cm⁻² Å⁻¹)');
    await page.locator('#zpValue').fill('1.14e-10');
    await page.getByLabel('Source of the zero-point').fill('Lanternfield standards, night 12 (invented)');
    await page.getByRole('button', { name: 'Save as a new version' }).click();
    await expect(page.getByRole('alert').first().textContent()).resolves.toMatch(/reason is required/);
    await page.getByLabel('Reason for the change (required, kept with the new version)').fill('Our own standards');
    await Promise.all([page.waitForURL(/\/admin\/bands\/H\?saved=v\d+$/), page.getByRole('button', { name: 'Save as a new version' }).click()]);
    await expect(page.getByTestId('band-zero-point').textContent()).resolves.toMatch(/1\.1400e-10/);
    await page.goto(`${run.baseUrl}/admin/bands/H?version=starter-1`);
    await expect(page.getByTestId('band-zero-point').textContent()).resolves.toMatch(/1\.1330e-10/);
    await page.close();
  });

  it('the band pages and changes are for admins only', async () => {
    const cookie = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    const page = await fetch(`${run.baseUrl}/admin/bands/new`, { headers: { cookie } });
    expect(page.status).toBe(403);
    const r = await callApi(run.baseUrl, '/api/admin/bands/V/zero-point', { cookie, json: { zeroPoint: { fLambdaCgs: 3.6e-9, relErr: 0, source: 'nope nope' }, reason: 'not allowed' } });
    expect(r.status).toBe(403);
    expect((await callApi(run.baseUrl, '/api/admin/bands/preview', { json: { fileName: 'x', content: '1 2', wavelengthUnit: 'nm', convention: 'photon' } })).status).toBe(401);
  });
});

describe('deactivation through the real middleware', () => {
  it('a deactivated person’s session and API token stop working; reactivated, the token works again', async () => {
    const who = people.reviewer;
    const cookie = await signInCookie(run.baseUrl, who.email, who.password);
    const token = await callApi(run.baseUrl, '/api/tokens', { cookie, json: { name: 'nightly script' } });
    expect(token.status).toBe(201);
    const secret = (token.body as { secret: string }).secret;
    const asToken = () => fetch(`${run.baseUrl}/api/me`, { headers: { authorization: `Bearer ${secret}` } });
    expect((await asToken()).status).toBe(200);
    expect((await callApi(run.baseUrl, '/api/me', { cookie })).status).toBe(200);

    const adminCookie = await signInCookie(run.baseUrl, people.admin.email, people.admin.password);
    const list = await callApi(run.baseUrl, `/api/admin/people?q=${encodeURIComponent(who.email)}`, { cookie: adminCookie });
    const userId = (list.body as { people: { id: string }[] }).people[0].id;
    expect((await callApi(run.baseUrl, `/api/admin/people/${userId}/deactivate`, { cookie: adminCookie, json: { reason: 'left the team' } })).status).toBe(200);

    expect((await callApi(run.baseUrl, '/api/me', { cookie })).status).toBe(401);
    const refused = await asToken();
    expect(refused.status).toBe(401);
    expect(((await refused.json()) as { error: { message: string } }).error.message).toMatch(/deactivated/);
    await expect(signInCookie(run.baseUrl, who.email, who.password)).rejects.toThrow(/403/);

    expect((await callApi(run.baseUrl, `/api/admin/people/${userId}/reactivate`, { cookie: adminCookie, json: {} })).status).toBe(200);
    expect((await asToken()).status).toBe(200);
    const audit = await callApi(run.baseUrl, '/api/admin/audit?action=person.', { cookie: adminCookie });
    expect((audit.body as { entries: { action: string }[] }).entries.map((e) => e.action)).toEqual(['person.reactivated', 'person.deactivated']);
  });
});
