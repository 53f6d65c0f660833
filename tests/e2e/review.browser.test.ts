// In real Chromium against the built server, on the demo with its review material (the invented
// Lanternfield stars, fitted by the worker path, as `npm run db:seed` makes it): the reviewer opens a star sheet and the SED plot draws the star's
// measured bands at their pivot wavelengths (the band library's values) with the fitted curve;
// then flags the fit from the keyboard on the review desk and finds the decision in the history.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { requireBand, starterBandLibrary } from '../../src/core/bands';
import { WIEN_B_M_K } from '../../src/core/constants';
import { callApi, type ReviewDemo, signInCookie, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
});
afterAll(() => demo?.stop());

interface TraceView {
  role: string | undefined;
  name: string | undefined;
  x: number[];
  y: number[];
  bands: string[] | undefined;
  hovertext: string[] | undefined;
}

/** Plotly keeps the drawn traces on the graph element as `data`. */
async function drawnTraces(page: Page): Promise<TraceView[]> {
  await page.locator('[data-testid="sed-plot"][data-ready="true"]').waitFor();
  return page.evaluate(() => {
    const el = document.querySelector('[data-testid="sed-plot"] .js-plotly-plot') as unknown as { data: Record<string, unknown>[] } | null;
    if (!el) throw new Error('no Plotly graph on the page');
    return el.data.map((t) => ({
      role: (t.meta as { role?: string } | undefined)?.role,
      name: t.name as string | undefined,
      x: Array.from(t.x as number[]),
      y: Array.from(t.y as number[]),
      bands: t.customdata ? Array.from(t.customdata as string[]) : undefined,
      hovertext: t.hovertext ? Array.from(t.hovertext as string[]) : undefined,
    }));
  });
}

describe('review in the browser', () => {
  it('draws the star’s bands at their pivots with the fitted curve, then takes a keyboard flag into the history', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'reviewer');
    const star = demo.run.app.db.$client.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Orrowind'").pluck().get(demo.campaignId) as number;
    const measured = demo.run.app.db.$client.prepare('SELECT DISTINCT band_key FROM measurements WHERE star_id = ? ORDER BY band_key').pluck().all(star) as string[];
    expect(measured.length).toBeGreaterThanOrEqual(10);

    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${star}`);
    await expect(page.getByTestId('star-key').textContent()).resolves.toBe('Orrowind');
    await expect(page.getByTestId('colour-temperature-note').textContent()).resolves.toMatch(/blackbody colour temperature/);
    const traces = await drawnTraces(page);

    // Every measured band is drawn once among the data traces, at the band library's pivot wavelength.
    const library = starterBandLibrary();
    const dataTraces = traces.filter((t) => ['measured', 'outlier', 'excluded', 'upper_limit'].includes(t.role ?? ''));
    const drawn = dataTraces.flatMap((t) => t.bands!.map((band, i) => ({ band, x: t.x[i], role: t.role })));
    expect(drawn.map((d) => d.band).sort()).toEqual(measured);
    for (const d of drawn) expect(Math.abs(d.x - requireBand(library, d.band).pivotAngstrom / 1e4)).toBeLessThan(1e-9);
    // The mock J value was made 0.45 mag too bright: the consistency test rejects it (decision 0027), so
    // it is drawn as not in the fit, with the reason and the test's numbers on hover; W3 and W4 lie
    // beyond ~5 µm: not in the fit either, with that reason.
    const excluded = traces.find((t) => t.role === 'excluded')!;
    const hoverOf = (band: string) => excluded.hovertext![excluded.bands!.indexOf(band)];
    expect([...excluded.bands!].sort()).toEqual(['J', 'W3', 'W4']);
    expect(hoverOf('J')).toMatch(/rejected as inconsistent with the other bands \(inconsistent with the other bands: [\d.]+σ above the fit made without it/);
    expect(hoverOf('W3')).toMatch(/beyond ~5 µm/);
    expect(hoverOf('W4')).toMatch(/beyond ~5 µm/);
    expect(traces.some((t) => t.role === 'outlier')).toBe(false);
    // The fitted band means and the residual panel cover the same bands.
    expect(traces.find((t) => t.role === 'model')!.bands!.sort()).toEqual(measured);
    expect(traces.find((t) => t.role === 'residual')!.bands!.sort()).toEqual(measured);

    // The curve drawn is the Planck fit's blackbody (the photosphere model has no continuous
    // spectrum): it spans 0.1–30 µm and F_λ = λF_λ/λ peaks at Wien's λ_max = b/T_bb (CODATA 2018 b).
    const curve = traces.find((t) => t.role === 'curve')!;
    expect(curve.x.length).toBeGreaterThan(100);
    expect(curve.x[0]).toBeCloseTo(0.1, 6);
    expect(curve.x[curve.x.length - 1]).toBeCloseTo(30, 4);
    const teffK = demo.run.app.db.$client.prepare("SELECT tbb_k FROM fit_results WHERE star_id = ? AND review_status = 'pending'").pluck().get(star) as number;
    const flambda = curve.y.map((y, i) => y / curve.x[i]);
    const peakUm = curve.x[flambda.indexOf(Math.max(...flambda))];
    // The curve is sampled every 2 % in λ, so the peak is found to about that.
    expect(Math.abs(peakUm / ((WIEN_B_M_K / teffK) * 1e6) - 1)).toBeLessThan(0.025);
    await expect(page.getByTestId('sed-summary').textContent()).resolves.toMatch(/J at 1\.2\d\d µm/);

    // The review desk: walk to Orrowind with j, flag with f, reason 2, a comment, Enter.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    await page.getByTestId('queue-list').waitFor();
    const current = page.getByTestId('current-star');
    for (let i = 0; i < 10 && (await current.textContent()) !== 'Orrowind'; i++) await page.keyboard.press('j');
    await expect(current.textContent()).resolves.toBe('Orrowind');
    await page.keyboard.press('?');
    await page.getByRole('dialog', { name: 'Keys of the review desk' }).waitFor();
    await page.keyboard.press('Escape');
    await page.keyboard.press('f');
    await page.getByTestId('flag-form').waitFor();
    await page.keyboard.press('2');
    await expect(page.getByRole('radio', { name: /One or more measurements look wrong/ }).isChecked()).resolves.toBe(true);
    // The digit moved the focus to the comment: what is typed next, digits included, is the comment
    // and does not choose another reason (7, 6 and 2 are reason keys).
    await expect(page.evaluate(() => document.activeElement?.id)).resolves.toBe('flag-comment');
    await page.keyboard.type('J is 0.45 mag brighter than the curve; check the 2MASS match (7 6 2).');
    await expect(page.getByRole('radio', { name: /One or more measurements look wrong/ }).isChecked()).resolves.toBe(true);
    await page.keyboard.press('Enter');
    await page.getByTestId('desk-status').getByText('Flagged Orrowind: One or more measurements look wrong.').waitFor();
    // It left the queue, and the database holds the decision with the reviewer.
    await expect(page.getByTestId('queue-list').locator('[data-star="Orrowind"]').count()).resolves.toBe(0);
    const row = demo.run.app.db.$client
      .prepare("SELECT d.decision, d.reason, d.comment, u.email FROM review_decisions d JOIN fit_results r ON r.id = d.fit_result_id JOIN user u ON u.id = d.reviewer_id WHERE r.star_id = ? AND d.superseded_at IS NULL")
      .get(star) as Record<string, string>;
    expect(row).toEqual({ decision: 'flagged', reason: 'bad_photometry', comment: 'J is 0.45 mag brighter than the curve; check the 2MASS match (7 6 2).', email: demo.people.reviewer.email });

    // The star sheet's history shows it, server-rendered.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${star}`);
    const latest = page.getByTestId('review-history').locator('li').first();
    await expect(latest.getAttribute('data-decision')).resolves.toBe('flagged');
    await expect(latest.getAttribute('data-reason')).resolves.toBe('bad_photometry');
    await expect(latest.textContent()).resolves.toContain(demo.people.reviewer.name);
    await expect(page.getByTestId('review-status').textContent()).resolves.toBe('flagged');
    await page.close();
  });

  it('keeps the desk and the decision form from collaborators', async () => {
    const page = await demo.browser.newPage();
    await demo.signIn(page, 'collaborator');
    const desk = await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    expect(desk?.status()).toBe(403);
    // The star sheet is open to every member, without the decision form.
    const star = demo.run.app.db.$client.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Velloran'").pluck().get(demo.campaignId) as number;
    const sheet = await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${star}`);
    expect(sheet?.status()).toBe(200);
    await expect(page.getByRole('heading', { name: 'Decide' }).count()).resolves.toBe(0);
    await expect(page.getByTestId('band-table').locator('tr[data-band]').count()).resolves.toBe(12);
    await page.close();
  });

  it('serves the star sheet and takes a decision without JavaScript', async () => {
    const star = demo.run.app.db.$client.prepare("SELECT id FROM stars WHERE campaign_id = ? AND star_key = 'Quillmark'").pluck().get(demo.campaignId) as number;
    const fitId = demo.run.app.db.$client.prepare("SELECT id FROM fit_results WHERE star_id = ? AND review_status = 'pending'").pluck().get(star) as number;
    const url = `${demo.run.baseUrl}/campaigns/${demo.campaignId}/stars/${star}`;
    const reviewer = await signInCookie(demo.run.baseUrl, demo.people.reviewer.email, demo.people.reviewer.password);
    const html = await (await fetch(url, { headers: { cookie: reviewer } })).text();
    // Numbers, the colour-temperature note and every band with its pivot are in the HTML itself.
    expect(html).toMatch(/data-testid="teff">\d{4} ± \d+ K/);
    expect(html).toContain('blackbody colour temperature');
    const library = starterBandLibrary();
    for (const key of ['B', 'V', 'G', 'J', 'Ks', 'W1', 'W4']) {
      expect(html).toContain(`data-band="${key}" data-pivot-um="${requireBand(library, key).pivotAngstrom / 1e4}"`);
    }
    const post = (cookie: string, fields: Record<string, string>) =>
      fetch(url, { method: 'POST', headers: { cookie, origin: demo.run.baseUrl, 'content-type': 'application/x-www-form-urlencoded' }, body: new URLSearchParams(fields).toString(), redirect: 'manual' });
    // A flag without a reason is refused with the reason named, and nothing is written.
    const refused = await post(reviewer, { fitId: String(fitId), decision: 'flagged', reason: '', comment: '' });
    expect(refused.status).toBe(400);
    expect(await refused.text()).toMatch(/A flag needs a reason/);
    // An analyst without the reviewer role cannot decide through the form either.
    const analyst = await signInCookie(demo.run.baseUrl, demo.people.analyst.email, demo.people.analyst.password);
    expect((await post(analyst, { fitId: String(fitId), decision: 'flagged', reason: 'poor_fit' })).status).toBe(403);
    const ok = await post(reviewer, { fitId: String(fitId), decision: 'flagged', reason: 'poor_fit', comment: 'Optical bands sit high.' });
    expect(ok.status).toBe(200);
    expect(await ok.text()).toContain('Fit flagged: The curve does not follow the photometry.');
    const rows = demo.run.app.db.$client.prepare('SELECT decision, reason, comment FROM review_decisions WHERE fit_result_id = ?').all(fitId);
    expect(rows).toEqual([{ decision: 'flagged', reason: 'poor_fit', comment: 'Optical bands sit high.' }]);
  });

  it('routes every review endpoint in the built server, with 401 JSON for anonymous callers', async () => {
    const fitId = demo.run.app.db.$client.prepare("SELECT r.id FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE s.star_key = 'Tamsel Minor'").pluck().get() as number;
    const endpoints: [string, string, unknown?][] = [
      ['GET', `/api/campaigns/${demo.campaignId}/stars/Tamsel%20Minor`],
      ['GET', `/api/campaigns/${demo.campaignId}/review-queue?noFlags=1`],
      ['POST', `/api/fits/${fitId}/decision`, { decision: 'flagged', reason: 'blend_suspected' }],
      ['GET', `/api/fits/${fitId}/history`],
      ['POST', `/api/campaigns/${demo.campaignId}/review/bulk`, { filter: { teffMinK: 90000 }, decision: 'accepted' }],
      ['GET', `/api/campaigns/${demo.campaignId}/review/settings`],
      ['POST', `/api/campaigns/${demo.campaignId}/review/settings`, { fourEyes: true }],
      ['GET', `/api/campaigns/${demo.campaignId}/review/audit`],
    ];
    const reviewer = await signInCookie(demo.run.baseUrl, demo.people.reviewer.email, demo.people.reviewer.password);
    for (const [method, p, json] of endpoints) {
      const anonymous = await callApi(demo.run.baseUrl, p, { method, json });
      expect(anonymous.status, `${method} ${p}`).toBe(401);
      expect(anonymous.contentType).toMatch(/application\/json/);
      const asReviewer = await callApi(demo.run.baseUrl, p, { method, json, cookie: reviewer });
      // The reviewer may do all of it (switching the rule too: reviewers and analysts of the campaign may).
      expect(asReviewer.status, `${method} ${p}: ${JSON.stringify(asReviewer.body)}`).toBe(p.endsWith('/decision') ? 201 : 200);
    }
  });
});
