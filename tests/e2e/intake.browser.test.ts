// In real Chromium against the built server and a worker process: the demo analyst adds a CSV
// through the Uppy dashboard, uploads it, adjusts the detected mapping, imports it, starts a batch
// and sees it complete; a
// refused import shows its report by row and column; an unreadable file is refused on arrival.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { count, eq } from 'drizzle-orm';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { batches, campaigns, measurements, stars, uploads } from '../../src/db/schema';
import { projectRoot } from '../../src/db/paths';
import { readFits } from '../../src/core/input/fits-file';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { launchBrowser, signInWithForm, startApp, type Browser, type RunningApp } from './harness';

let run: RunningApp;
let browser: Browser;
const people = demoUsers();

beforeAll(async () => {
  run = await startApp({ worker: true });
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await run?.stop();
});

// One browser profile for the file: after the first test the session cookie is already there.
const signIn = (page: Page) => signInWithForm(browser, page, run.baseUrl, people.analyst, { keepSession: true });

function demoCampaignId(): string {
  return run.app.db.select().from(campaigns).where(eq(campaigns.name, DEMO_CAMPAIGN.name)).get()!.id;
}

async function addThroughDashboard(page: Page, file: string | { name: string; mimeType: string; buffer: Buffer }) {
  // Uppy's dashboard keeps a hidden <input type=file> behind its "browse files" link.
  const input = page.getByTestId('uppy-dashboard').locator('input[type=file]').first();
  await input.setInputFiles(file);
  await page.getByTestId('uppy-dashboard').getByRole('button', { name: /Upload/ }).click();
}

describe('intake in the browser', () => {
  it('uploads a CSV through the Uppy dashboard, maps it, imports it, starts a batch and sees it complete', async () => {
    const page = await browser.newPage();
    await signIn(page);
    const id = demoCampaignId();
    await page.goto(`${run.baseUrl}/campaigns/${id}`);
    await Promise.all([page.waitForURL(`${run.baseUrl}/campaigns/${id}/intake`), page.getByTestId('intake-link').click()]);
    await page.getByTestId('uppy-dashboard').locator('.uppy-Dashboard').waitFor();

    await addThroughDashboard(page, path.join(projectRoot(), 'fixtures/intake/catalogue_wide.csv'));
    const editor = page.getByTestId('mapping-editor');
    await editor.waitFor({ timeout: 30_000 });
    await expect(page.getByTestId('upload-table').getByText('catalogue_wide.csv').count()).resolves.toBe(1);

    // The guess from the names: Name is the id, Vmag is V, ph_qual holds 2MASS letters.
    const meaning = (col: string) => editor.locator(`tr[data-column="${col}"] select`).first();
    await expect(meaning('Name').inputValue()).resolves.toBe('id');
    await expect(meaning('Vmag').inputValue()).resolves.toBe('mag');
    await expect(meaning('ph_qual').inputValue()).resolves.toBe('quality');
    // Adjust: leave W1 out of this import.
    await meaning('W1mag').selectOption('ignore');
    await meaning('e_W1mag').selectOption('ignore');

    await editor.getByRole('button', { name: 'Check every row' }).click();
    await expect(editor.getByTestId('check-summary').textContent()).resolves.toMatch(/3 stars with 14 values ready; 0 errors/);

    await editor.getByTestId('import-button').click();
    await editor.getByTestId('import-result').waitFor();
    await expect(editor.getByTestId('import-result').textContent()).resolves.toMatch(/Imported 3 new and 0 existing stars: 14 new values/);
    await expect(editor.getByTestId('import-result').getByRole('link', { name: '3 stars' }).getAttribute('href')).resolves.toBe(`/campaigns/${id}/stars`);

    const n = run.app.db.select({ n: count() }).from(stars).where(eq(stars.campaignId, id)).get()!.n;
    expect(n).toBe(3);
    expect(run.app.db.select({ n: count() }).from(measurements).where(eq(measurements.bandKey, 'W1')).get()!.n).toBe(0);
    const u = run.app.db.select().from(uploads).where(eq(uploads.originalName, 'catalogue_wide.csv')).get()!;
    expect(u).toMatchObject({ status: 'imported', campaignId: id, detectedFormat: 'csv' });
    // The page header's counts follow the import without a reload (they said 0 and 0 before it).
    await expect(page.getByTestId('campaign-star-count').textContent()).resolves.toBe('3');
    await expect(page.getByTestId('campaign-value-count').textContent()).resolves.toBe('14');

    // On to a batch: the worker started with the server fits the three stars.
    await Promise.all([page.waitForURL(`${run.baseUrl}/campaigns/${id}/batches`), editor.getByRole('link', { name: 'Start a batch fit' }).click()]);
    await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'));
    await Promise.all([page.waitForURL(new RegExp(`/campaigns/${id}/batches/[^/]+$`)), page.getByRole('button', { name: 'Start the batch' }).click()]);
    const done = page.getByTestId('batch-done');
    await page.waitForFunction(() => /3 \/ 3 stars · 100\.0 %/.test(document.querySelector('[data-testid="batch-done"]')?.textContent ?? ''), undefined, { timeout: 60_000 }).catch(async (err) => {
      throw new Error(`${(err as Error).message}\nshown: ${await done.textContent()}\n${run.logs().slice(-3000)}`);
    });
    // The worker marks the batch finished just after its last chunk's results commit (and the e-mail is
    // prepared), so the page can show 100 % a moment before: wait for the status, up to 30 s.
    const statusOf = () => run.app.db.select().from(batches).where(eq(batches.campaignId, id)).get()!.status;
    for (let waited = 0; statusOf() !== 'finished' && waited < 30_000; waited += 100) await new Promise((r) => setTimeout(r, 100));
    expect(statusOf()).toBe('finished');
    await page.close();
  });

  it('shows the report by row and column when rows are bad, and imports the valid rows on request', async () => {
    const page = await browser.newPage();
    await signIn(page);
    const id = demoCampaignId();
    await page.goto(`${run.baseUrl}/campaigns/${id}/intake`);
    await page.getByTestId('uppy-dashboard').locator('.uppy-Dashboard').waitFor();
    const csv = 'id,V,V_err\nember-91,9.1,0.02\nember-92,faint,0.02\nember-93,9.3\n';
    await addThroughDashboard(page, { name: 'bad-rows.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) });
    const editor = page.getByTestId('mapping-editor');
    await editor.waitFor({ timeout: 30_000 });
    await editor.getByTestId('import-button').click();
    await editor.getByTestId('report-table').waitFor();
    const rows = await editor.getByTestId('report-table').locator('tbody tr').allTextContents();
    expect(rows).toHaveLength(2);
    expect(rows[0]).toMatch(/bad-rows\.csv\s*2\s*V.*"faint" is not a number/);
    expect(rows[1]).toMatch(/bad-rows\.csv\s*3.*has 2 values but the header has 3 columns/);
    await expect(editor.getByTestId('mapping-message').textContent()).resolves.toMatch(/nothing was imported/);
    expect(run.app.db.select().from(stars).where(eq(stars.starKey, 'ember-91')).get()).toBeUndefined();

    await editor.getByTestId('import-valid-rows').check();
    await editor.getByTestId('import-button').click();
    await editor.getByTestId('import-result').waitFor();
    expect(run.app.db.select().from(stars).where(eq(stars.starKey, 'ember-91')).get()).toBeTruthy();
    expect(run.app.db.select().from(stars).where(eq(stars.starKey, 'ember-92')).get()).toBeUndefined();
    await page.close();
  });

  it('refuses a binary file named .csv on arrival with a clear message', async () => {
    const page = await browser.newPage();
    await signIn(page);
    await page.goto(`${run.baseUrl}/campaigns/${demoCampaignId()}/intake`);
    await page.getByTestId('uppy-dashboard').locator('.uppy-Dashboard').waitFor();
    const before = run.app.db.select({ n: count() }).from(stars).get()!.n;
    await addThroughDashboard(page, { name: 'sheet.csv', mimeType: 'text/csv', buffer: Buffer.from([0x50, 0x4b, 0x03, 0x04, 0, 0, 1, 2, 3]) });
    await page.getByTestId('upload-errors').waitFor({ timeout: 30_000 });
    await expect(page.getByTestId('upload-errors').textContent()).resolves.toMatch(/sheet\.csv: .*binary content \(a ZIP archive/);
    expect(run.app.db.select({ n: count() }).from(stars).get()!.n).toBe(before);
    await page.close();
  });

  it('reports a truncated FITS table as truncated, with the byte counts, not as an image', async () => {
    const page = await browser.newPage();
    await signIn(page);
    await page.goto(`${run.baseUrl}/campaigns/${demoCampaignId()}/intake`);
    await page.getByTestId('uppy-dashboard').locator('.uppy-Dashboard').waitFor();
    // The astropy-written fixture (a primary header, then one BINTABLE) cut 100 bytes into the table's data.
    const whole = readFileSync(path.join(projectRoot(), 'fixtures/fits/all_types.fits'));
    const table = readFits(new Uint8Array(whole)).hdus[1];
    expect(table.kind).toBe('bintable');
    const cut = whole.subarray(0, table.dataOffset + 100);
    const before = run.app.db.select({ n: count() }).from(stars).get()!.n;
    await addThroughDashboard(page, { name: 'cut-table.fits', mimeType: 'application/fits', buffer: Buffer.from(cut) });
    const error = page.getByTestId('mapping-load-error');
    await error.waitFor({ timeout: 60_000 });
    const text = (await error.textContent()) ?? '';
    const missing = table.dataOffset + table.dataBytes - cut.length;
    expect(text.startsWith('cut-table.fits: ')).toBe(true);
    expect(text).toContain(`truncated file: HDU 1 declares ${table.dataBytes} bytes of data from byte ${table.dataOffset}, but the file ends at byte ${cut.length} (${missing} bytes missing)`);
    const row = page.getByTestId('upload-table').locator('tr', { hasText: 'cut-table.fits' });
    // The uploads list refreshes after the reading job's answer: wait for its row to say so.
    await expect.poll(() => row.textContent(), { timeout: 15_000 }).toMatch(/rejected/);
    await expect(row.textContent()).resolves.not.toMatch(/FITS image/);
    const stored = run.app.db.select().from(uploads).where(eq(uploads.originalName, 'cut-table.fits')).get()!;
    expect([stored.status, stored.detectedFormat]).toEqual(['rejected', null]);
    expect(run.app.db.select({ n: count() }).from(stars).get()!.n).toBe(before);
    await page.close();
  });
});
