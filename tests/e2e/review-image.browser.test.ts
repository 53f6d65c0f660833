// In real Chromium against the built server, on the demo with its review material: a FITS image's
// header gives Velloran a V magnitude (the header fixture written by astropy, invented target), and
// the star is fitted again with it. On the review desk, where the reviewer decides, the fit's card
// says that the fit used a value measured on an image, in place of which catalogue value, with the
// header's observation (the frame's pointing labelled as not the star's position), and how to keep
// it out; an analyst sets it aside from the same card, with a reason (audited), and uses it again
// (decision 0025).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { projectRoot } from '../../src/db/paths';
import { refit } from '../factories-catalogue';
import { callApi, type ReviewDemo, signInCookie, startWithReviewDemo } from './harness';

let demo: ReviewDemo;
let catalogueSource: string;
let imageId: number;

beforeAll(async () => {
  demo = await startWithReviewDemo();
  const sqlite = demo.run.app.db.$client;
  const cookie = await signInCookie(demo.run.baseUrl, demo.people.analyst.email, demo.people.analyst.password);
  const api = `/api/campaigns/${demo.campaignId}`;
  const waitJob = async (uploadId: string, jobId: string) => {
    for (let i = 0; i < 480; i++) {
      const j = (await callApi(demo.run.baseUrl, `${api}/uploads/${uploadId}/jobs/${jobId}`, { cookie })).body as { job: { status: string } };
      if (j.job.status === 'done' || j.job.status === 'failed') return j.job;
      await new Promise((r) => setTimeout(r, 250));
    }
    throw new Error('the intake job did not finish within two minutes');
  };
  const catalogueV = sqlite
    .prepare("SELECT m.mag, m.source FROM measurements m JOIN stars s ON s.id = m.star_id WHERE s.campaign_id = ? AND s.star_key = 'Velloran' AND m.band_key = 'V'")
    .get(demo.campaignId) as { mag: number; source: string };
  catalogueSource = catalogueV.source;
  const form = new FormData();
  form.append('file', new Blob([readFileSync(path.join(projectRoot(), 'fixtures/fits/image_header.fits'))]), 'velloran-v.fits');
  const posted = await fetch(`${demo.run.baseUrl}${api}/uploads`, { method: 'POST', headers: { cookie, origin: demo.run.baseUrl }, body: form });
  expect(posted.status, await posted.clone().text()).toBe(201);
  const { upload } = (await posted.json()) as { upload: { id: string; job: { id: string } } };
  expect(await waitJob(upload.id, upload.job.id)).toMatchObject({ status: 'done' });
  // The image's V agrees with the catalogue's and has the smaller error, so the fit takes it.
  const imp = await callApi(demo.run.baseUrl, `${api}/uploads/${upload.id}/import`, { cookie, json: { rules: { quality: [] }, image: { starId: 'Velloran', band: 'V', mag: catalogueV.mag, magErr: 0.01 } } });
  expect(imp.status).toBe(202);
  expect(await waitJob(upload.id, (imp.body as { job: { id: string } }).job.id)).toMatchObject({ status: 'done' });
  imageId = sqlite.prepare("SELECT id FROM measurements WHERE source = 'velloran-v.fits'").pluck().get() as number;
  // Fitted again with the image's value (in this process, on the server's database file).
  await refit(demo.run.app, demo.actor(demo.people.analyst.email), demo.campaignId, ['Velloran']);
});
afterAll(() => demo?.stop());

const said = async (page: Page, testId: string) => ((await page.getByTestId(testId).first().textContent()) ?? '').replace(/\s+/g, ' ').trim();

async function openOnDesk(page: Page) {
  await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
  await page.getByTestId('queue-list').locator('[data-star="Velloran"]').click();
  await expect.poll(() => page.getByTestId('current-star').textContent(), { timeout: 15_000 }).toBe('Velloran');
  await page.getByTestId('desk-image-values').waitFor({ timeout: 15_000 });
}

describe("what a FITS image gave the fit, on the review desk", () => {
  it('shows the reviewer the image value the fit used, with its observation, and how to keep it out', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'reviewer');
    await openOnDesk(page);
    const item = page.getByTestId('desk-image-values').locator(`li[data-measurement="${imageId}"]`);
    expect(await item.getAttribute('data-in-fit')).toBe('used');
    expect(await said(page, 'desk-image-summary')).toMatch(/^This fit uses 1 value measured on an image/);
    expect(await said(page, 'desk-image-use')).toMatch(new RegExp(`^used in this fit in place of ${catalogueSource.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}, residual [+-]\\d+\\.\\dσ$`));
    // The fixture's pointing is RA 05:35:17.30 = 83.8221°, Dec −05:23:28.0 = −5.3911°: the frame's, not the star's.
    expect(await said(page, 'desk-image-observation')).toMatch(/^measured on a FITS image.*frame pointing RA 83\.8221° Dec -5\.3911° \(the frame's, not the star's position\)$/);
    // A reviewer does not set values aside; the card says how it is done, and links the star sheet's values.
    expect(await item.getByRole('button', { name: 'Set aside' }).count()).toBe(0);
    expect(await said(page, 'desk-image-how-to-turn-off')).toMatch(/flag this fit .*One or more measurements look wrong.*analysts set values aside on the star sheet/);
    const sheetLink = await item.getByRole('link', { name: 'star sheet' }).getAttribute('href');
    expect(sheetLink).toMatch(new RegExp(`^/campaigns/${demo.campaignId}/stars/\\d+#measurements$`));
    // At a phone's width the card, image values included, scrolls no page sideways.
    await page.setViewportSize({ width: 390, height: 844 });
    await openOnDesk(page);
    expect(await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth)).toBeLessThanOrEqual(0);
    const box = (await page.getByTestId('desk-image-values').boundingBox())!;
    expect(box.x + box.width).toBeLessThanOrEqual(390);
    await page.close();
  });

  it('lets an analyst set the value aside from the card, with a reason, and use it again', async () => {
    const sqlite = demo.run.app.db.$client;
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    await openOnDesk(page);
    const item = () => page.getByTestId('desk-image-values').locator(`li[data-measurement="${imageId}"]`);
    await item().getByLabel('Why leave it out of later fits?').fill('clouds during the exposure');
    // Typing in the card's field is not taken for the desk's keys (a, f, j, k).
    expect(await page.getByTestId('current-star').textContent()).toBe('Velloran');
    await item().getByRole('button', { name: 'Set aside' }).click();
    await expect.poll(() => item().getAttribute('data-set-aside'), { timeout: 15_000 }).toBe('true');
    expect(await said(page, 'desk-image-set-aside')).toBe(`Set aside by ${demo.people.analyst.name}: “clouds during the exposure”. It takes effect when this star is fitted again; the fit shown here was made before.`);
    // The fit under review was made with it, and still says so.
    expect(await item().getAttribute('data-in-fit')).toBe('used');
    expect(sqlite.prepare('SELECT set_aside_reason FROM measurements WHERE id = ?').pluck().get(imageId)).toBe('clouds during the exposure');
    const audited = sqlite.prepare("SELECT details FROM audit_events WHERE action = 'photometry.set_aside' AND campaign_id = ?").pluck().all(demo.campaignId) as string[];
    expect(audited.map((d) => JSON.parse(d) as Record<string, unknown>)).toEqual([{ reason: 'clouds during the exposure', count: 1, values: [{ id: imageId, star: 'Velloran', band: 'V', source: 'velloran-v.fits' }] }]);

    await item().getByRole('button', { name: 'Use again in fits' }).click();
    await expect.poll(() => item().getAttribute('data-set-aside'), { timeout: 15_000 }).toBe('false');
    expect(sqlite.prepare('SELECT set_aside_at FROM measurements WHERE id = ?').pluck().get(imageId)).toBeNull();
    expect(await item().getByRole('button', { name: 'Set aside' }).count()).toBe(1);
    await page.close();
  });
});
