// In real Chromium against the built server, on the demo with its review material: the analyst
// sets one value of a star aside from the star sheet (with a reason), sees it marked with who, when
// and why and that it takes effect at the next fit, finds it in the database and the audit trail,
// and uses it again; a reviewer sees the marks but gets no switch. (What the next fit does with a
// set-aside value is tested on the worker path in tests/measurement-use.test.ts.)
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Locator } from 'playwright-core';
import { projectRoot } from '../../src/db/paths';
import { callApi, type ReviewDemo, signInCookie, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
});
afterAll(() => demo?.stop());

describe('setting a value aside on the star sheet', () => {
  it('marks it with who, when and why, says it takes effect at the next fit, and undoes it', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    const sqlite = demo.run.app.db.$client;
    const starId = sqlite.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Orrowind'").pluck().get(demo.campaignId) as number;
    const j = sqlite.prepare("SELECT id, source FROM measurements WHERE star_id = ? AND band_key = 'J'").get(starId) as { id: number; source: string };
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${starId}`);
    const row = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await expect(row.getAttribute('data-in-fit')).resolves.toBe('used');
    await expect(row.getAttribute('data-set-aside')).resolves.toBe('false');
    // The band table names the file each fitted value came from.
    await expect(page.locator('[data-testid="band-table"] tr[data-band="J"]').getAttribute('data-source')).resolves.toBe(j.source);

    await row.getByText('Set aside…').click();
    await row.getByLabel('Why (kept with the value)').fill('J is 0.45 mag off the curve; the 2MASS match is doubtful');
    await Promise.all([page.waitForLoadState('load'), row.getByRole('button', { name: 'Set aside' }).click()]);
    await page.getByTestId('set-aside-notice').waitFor();
    await expect(page.getByTestId('set-aside-notice').textContent()).resolves.toMatch(/the next fit of this star leaves it out/);
    const after = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await expect(after.getAttribute('data-set-aside')).resolves.toBe('true');
    const mark = await after.getByTestId('set-aside-mark').textContent();
    expect(mark).toContain(demo.people.analyst.name);
    expect(mark).toContain('“J is 0.45 mag off the curve; the 2MASS match is doubtful”');
    await after.getByTestId('changed-since-fit').waitFor();
    // The newest fit was made before: it still shows the value as used.
    await expect(after.getAttribute('data-in-fit')).resolves.toBe('used');

    const stored = sqlite.prepare('SELECT set_aside_at IS NOT NULL AS aside, set_aside_reason AS reason FROM measurements WHERE id = ?').get(j.id);
    expect(stored).toEqual({ aside: 1, reason: 'J is 0.45 mag off the curve; the 2MASS match is doubtful' });
    const audited = sqlite.prepare("SELECT details FROM audit_events WHERE action = 'photometry.set_aside' AND campaign_id = ?").pluck().all(demo.campaignId) as string[];
    expect(audited.map((d) => JSON.parse(d) as Record<string, unknown>)).toEqual([
      { reason: 'J is 0.45 mag off the curve; the 2MASS match is doubtful', count: 1, values: [{ id: j.id, star: 'Orrowind', band: 'J', source: j.source }] },
    ]);

    // A reviewer sees the mark but has no switch.
    await demo.signIn(page, 'reviewer');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${starId}`);
    const seen = page.locator(`[data-testid="measurement-table"] tr[data-measurement="${j.id}"]`);
    await seen.getByTestId('set-aside-mark').waitFor();
    await expect(seen.getByRole('button').count()).resolves.toBe(0);

    // The analyst uses it again.
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${starId}`);
    await Promise.all([page.waitForLoadState('load'), page.locator(`tr[data-measurement="${j.id}"]`).getByRole('button', { name: 'Use again in fits' }).click()]);
    await page.getByTestId('set-aside-notice').waitFor();
    await expect(page.locator(`tr[data-measurement="${j.id}"]`).getAttribute('data-set-aside')).resolves.toBe('false');
    await expect(page.locator(`tr[data-measurement="${j.id}"]`).getByTestId('changed-since-fit').count()).resolves.toBe(0);
    expect(sqlite.prepare('SELECT set_aside_at FROM measurements WHERE id = ?').pluck().get(j.id)).toBeNull();
    expect(sqlite.prepare("SELECT count(*) FROM audit_events WHERE action = 'photometry.used_again' AND campaign_id = ?").pluck().get(demo.campaignId)).toBe(1);
    await page.close();
  });

  it("sets aside every value an image brought in from the intake page, and the star sheet shows what the image was", async () => {
    const sqlite = demo.run.app.db.$client;
    const cookie = await signInCookie(demo.run.baseUrl, demo.people.analyst.email, demo.people.analyst.password);
    const api = `${demo.run.baseUrl}/api/campaigns/${demo.campaignId}`;
    const waitJob = async (uploadId: string, jobId: string) => {
      for (let i = 0; i < 240; i++) {
        const j = (await callApi(demo.run.baseUrl, `/api/campaigns/${demo.campaignId}/uploads/${uploadId}/jobs/${jobId}`, { cookie })).body as { job: { status: string } };
        if (j.job.status === 'done' || j.job.status === 'failed') return j.job;
        await new Promise((r) => setTimeout(r, 250));
      }
      throw new Error('the intake job did not finish within a minute');
    };
    // The header fixture written by astropy (fixtures/fits/image_header.fits, invented target), measured as Cindermoor's V.
    const form = new FormData();
    form.append('file', new Blob([readFileSync(path.join(projectRoot(), 'fixtures/fits/image_header.fits'))]), 'cindermoor-v.fits');
    const posted = await fetch(`${api}/uploads`, { method: 'POST', headers: { cookie, origin: demo.run.baseUrl }, body: form });
    expect(posted.status, await posted.clone().text()).toBe(201);
    const { upload } = (await posted.json()) as { upload: { id: string; job: { id: string } } };
    expect(await waitJob(upload.id, upload.job.id)).toMatchObject({ status: 'done' });
    const imp = await callApi(demo.run.baseUrl, `/api/campaigns/${demo.campaignId}/uploads/${upload.id}/import`, { cookie, json: { rules: { quality: [] }, image: { starId: 'Cindermoor', band: 'V', mag: 9.81, magErr: 0.02 } } });
    expect(imp.status).toBe(202);
    expect(await waitJob(upload.id, (imp.body as { job: { id: string } }).job.id)).toMatchObject({ status: 'done' });

    const page = await demo.browser.newPage();
    await demo.signIn(page, 'analyst');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/intake`);
    const item = page.getByTestId('withdraw-list').locator(`li[data-upload="${upload.id}"]`);
    const said = async (l: Locator) => ((await l.textContent()) ?? '').replace(/\s+/g, ' ').trim();
    await expect(said(item.getByTestId('upload-value-use'))).resolves.toBe('1 value used in fits');
    await item.getByLabel('Why the values of cindermoor-v.fits are set aside').fill('guide star lost halfway through the exposure');
    await Promise.all([page.waitForLoadState('load'), item.getByRole('button', { name: 'Set aside its values' }).click()]);
    await expect(said(page.getByTestId('withdraw-notice'))).resolves.toBe('1 value of cindermoor-v.fits is set aside: the next fit of its star leaves it out; it stays on record.');
    await expect(said(page.getByTestId('withdraw-list').locator(`li[data-upload="${upload.id}"]`).getByTestId('upload-value-use'))).resolves.toBe('0 values used in fits, 1 set aside');

    const starId = sqlite.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Cindermoor'").pluck().get(demo.campaignId) as number;
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${starId}`);
    const row = page.locator('[data-testid="measurement-table"] tr[data-source="cindermoor-v.fits"]');
    await expect(row.getAttribute('data-set-aside')).resolves.toBe('true');
    // Imported after the newest fit: that fit did not use it.
    await expect(row.getAttribute('data-in-fit')).resolves.toBe('not_used');
    // The fixture's pointing is RA 05:35:17.30 = 83.8221°, Dec −05:23:28.0 = −5.3911°: shown as the frame's, not the star's.
    await expect(said(row.getByTestId('image-observation'))).resolves.toMatch(/measured on a FITS image.*frame pointing RA 83\.8221° Dec -5\.3911° \(observation record only, not the star's position\)/);
    await expect(row.getByTestId('set-aside-mark').textContent()).resolves.toContain('“guide star lost halfway through the exposure”');
    await page.close();
  });
});

