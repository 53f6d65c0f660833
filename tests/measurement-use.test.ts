// Setting values aside, on a real migrated SQLite with fits made by the worker: a FITS image's
// magnitude (the header fixture written by astropy, invented target) goes into the fit and the star
// sheet says so, with the image's filter, date and pointing; set aside (with a reason, audited) the
// next fit leaves it out and records why, and equals a fit made before the image came; used again,
// it is back. Refusals: no reason, values of another campaign, an archived campaign, a collaborator.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { POST as useRoute } from '../src/pages/api/campaigns/[id]/measurements/use';
import { projectRoot } from '../src/db/paths';
import type { Actor } from '../src/server/context';
import { HttpError } from '../src/server/errors';
import { createUpload, getUpload, importUpload } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { setMeasurementUse } from '../src/server/measurement-use';
import { setArchived } from '../src/server/members';
import { starSheet } from '../src/server/star-sheet';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { refit } from './factories-catalogue';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
let analyst: Actor;
let collaborator: Actor;
let campaignId: string;
let starKey: string;
let uploadId: string;
// This file checks which values reach the fit: robust rejection, which would take the image's
// deliberately bright V out as inconsistent with the other bands, is switched off.
const KEEP_EVERY_BAND = { reject: false };
/** Teff of the fit made before the image was imported (catalogue values only). */
let teffBefore: number;

const latestFit = () =>
  t.sqlite.prepare('SELECT teff_k, detail FROM fit_results WHERE campaign_id = ? ORDER BY id DESC LIMIT 1').get(campaignId) as { teff_k: number; detail: string };
const skippedOf = (detail: string) => (JSON.parse(detail) as { skipped: { band: string; source: string; reason: string }[] }).skipped;
const auditRows = (action: string) =>
  (t.sqlite.prepare('SELECT actor_id, details FROM audit_events WHERE action = ? ORDER BY id').all(action) as { actor_id: string; details: string }[]).map((r) => ({ actor: r.actor_id, ...(JSON.parse(r.details) as Record<string, unknown>) }));
const imageValue = () => starSheet(t.db, campaignId, starKey).measurements.find((m) => m.source === 'frame.fits')!;

beforeAll(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app, { name: 'Ana Lyst' });
  collaborator = await makeUser(t.app, { kind: 'guest', name: 'Col Guest' });
  campaignId = makeCampaign(t.app, analyst, { name: 'Set-aside test' }).id;
  await addToCampaign(t.app, analyst, campaignId, collaborator, ['collaborator']);
  const [star] = insertMockStars(t.db, { campaignId, count: 1, seed: 5, source: 'catalogue' });
  starKey = star.starKey;
  await refit(t.app, analyst, campaignId, [starKey], KEEP_EVERY_BAND);
  teffBefore = latestFit().teff_k;

  // The image: a V magnitude 0.8 mag brighter than the catalogue's, with a smaller error, so the
  // fit prefers it over the catalogue's V.
  const catalogueV = t.sqlite.prepare("SELECT mag FROM measurements WHERE band_key = 'V' AND source = 'catalogue'").pluck().get() as number;
  const form = new FormData();
  form.append('file', new Blob([readFileSync(path.join(projectRoot(), 'fixtures/fits/image_header.fits'))]), 'frame.fits');
  const u = await createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), { dataDir: path.dirname(t.filePath), maxBytes: 5 * 1024 * 1024 });
  await drainIntakeJobs(t.db);
  uploadId = getUpload(t.db, campaignId, u.id).id;
  const job = importUpload(t.app, analyst, campaignId, uploadId, { rules: { quality: [] }, image: { starId: starKey, band: 'V', mag: catalogueV - 0.8, magErr: 0.01 } });
  await drainIntakeJobs(t.db);
  outcomeOf(t.db, job.id);
});
afterAll(() => t.cleanup());

describe('an image value in the fit, set aside and used again', () => {
  it('shows what the image contributed to the fit, with the observation its header describes', async () => {
    // Imported after the star's newest fit: that fit did not use it.
    expect(imageValue()).toMatchObject({ inNewestFit: 'not_used', notUsedReason: 'added after the newest fit' });
    await refit(t.app, analyst, campaignId, [starKey], KEEP_EVERY_BAND);
    const fit = latestFit();
    expect(Math.abs(fit.teff_k - teffBefore)).toBeGreaterThan(10);
    expect(skippedOf(fit.detail)).toContainEqual({ band: 'V', source: 'catalogue', reason: 'another value in V was used (from frame.fits)' });
    const sheet = starSheet(t.db, campaignId, starKey);
    const image = sheet.measurements.find((m) => m.source === 'frame.fits')!;
    expect(image).toMatchObject({ bandKey: 'V', upload: { id: uploadId, name: 'frame.fits' }, inNewestFit: 'used', setAside: null, changedSinceFit: false });
    // The fixture's header (fixtures/fits/image_header.fits): its pointing is RA 05:35:17.30 = 83.822°, Dec −05:23:28.0.
    expect(image.image!.pointingRaDeg).toBeCloseTo(83.822083, 5);
    expect(image.image!.pointingDecDeg).toBeCloseTo(-5.391111, 5);
    expect(image.image!.filter).not.toBeNull();
    expect(sheet.measurements.find((m) => m.source === 'catalogue' && m.bandKey === 'V')).toMatchObject({ inNewestFit: 'not_used', notUsedReason: 'another value in V was used (from frame.fits)' });
  });

  it('set aside with a reason, the next fit leaves it out and says why; it equals the fit made before the image', async () => {
    const r = setMeasurementUse(t.db, analyst, campaignId, { uploadId, use: false, reason: 'frame taken through cloud' });
    expect(r).toEqual({ use: false, changed: 1, unchanged: 0, starKeys: [starKey], uploadName: 'frame.fits' });
    expect(imageValue()).toMatchObject({ setAside: { by: 'Ana Lyst', reason: 'frame taken through cloud' }, inNewestFit: 'used', changedSinceFit: true });
    expect(auditRows('photometry.set_aside')).toEqual([
      { actor: analyst.id, uploadId, uploadName: 'frame.fits', reason: 'frame taken through cloud', count: 1, values: [{ id: imageValue().id, star: starKey, band: 'V', source: 'frame.fits' }] },
    ]);
    // Setting it aside again changes nothing and writes nothing.
    expect(setMeasurementUse(t.db, analyst, campaignId, { uploadId, use: false, reason: 'again' })).toMatchObject({ changed: 0, unchanged: 1 });
    expect(auditRows('photometry.set_aside')).toHaveLength(1);

    await refit(t.app, analyst, campaignId, [starKey], KEEP_EVERY_BAND);
    const fit = latestFit();
    // Same photometry as the first fit, so the same numbers (the fit is deterministic).
    expect(fit.teff_k).toBeCloseTo(teffBefore, 6);
    expect(skippedOf(fit.detail)).toEqual([{ band: 'V', source: 'frame.fits', reason: 'set aside: not used in fits' }]);
    expect(imageValue()).toMatchObject({ inNewestFit: 'not_used', notUsedReason: 'set aside: not used in fits', changedSinceFit: false });
  });

  it('used again (one value, through the API route), the next fit takes it back', async () => {
    const id = imageValue().id;
    const res = await call(analyst, { measurementIds: [id], use: true });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ use: true, changed: 1 });
    expect(imageValue()).toMatchObject({ setAside: null, changedSinceFit: true });
    expect(auditRows('photometry.used_again')).toEqual([{ actor: analyst.id, count: 1, values: [{ id, star: starKey, band: 'V', source: 'frame.fits' }] }]);
    await refit(t.app, analyst, campaignId, [starKey], KEEP_EVERY_BAND);
    expect(Math.abs(latestFit().teff_k - teffBefore)).toBeGreaterThan(10);
    expect(imageValue()).toMatchObject({ inNewestFit: 'used', changedSinceFit: false });
  });
});

async function call(actor: Actor, body: unknown, id = campaignId) {
  const url = new URL('http://127.0.0.1/api/test');
  const request = new Request(url, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  const res = await useRoute({ locals: { app: t.app, actor }, params: { id }, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

describe('refusals', () => {
  const refusal = (f: () => unknown) => {
    try {
      f();
    } catch (e) {
      return e as HttpError;
    }
    throw new Error('not refused');
  };

  it('asks for a reason to set aside, and for either values or an upload; changes nothing', async () => {
    const id = imageValue().id;
    expect(refusal(() => setMeasurementUse(t.db, analyst, campaignId, { measurementIds: [id], use: false }))).toMatchObject({
      status: 400,
      field: 'reason',
      message: 'Say why the values are set aside: the reason is kept with them and in the audit trail.',
    });
    expect(refusal(() => setMeasurementUse(t.db, analyst, campaignId, { measurementIds: [id], uploadId, use: true }))).toMatchObject({ status: 400, field: 'measurementIds' });
    expect(imageValue().setAside).toBeNull();
  });

  it('refuses values of another campaign as not found, naming them', async () => {
    const other = makeCampaign(t.app, analyst, { name: 'Another campaign' }).id;
    const [s] = insertMockStars(t.db, { campaignId: other, count: 1, prefix: 'OTH' });
    const foreign = t.sqlite.prepare('SELECT id FROM measurements WHERE star_id = ? LIMIT 1').pluck().get(s.id) as number;
    expect(refusal(() => setMeasurementUse(t.db, analyst, campaignId, { measurementIds: [foreign], use: false, reason: 'x' }))).toMatchObject({ status: 404, message: `Value ${foreign} is not in this campaign.` });
    expect(t.sqlite.prepare('SELECT set_aside_at FROM measurements WHERE id = ?').pluck().get(foreign)).toBeNull();
  });

  it('refuses an archived campaign and a collaborator', async () => {
    const id = imageValue().id;
    expect((await call(collaborator, { measurementIds: [id], use: false, reason: 'x' })).status).toBe(403);
    setArchived(t.db, analyst, campaignId, { archived: true });
    try {
      expect(refusal(() => setMeasurementUse(t.db, analyst, campaignId, { measurementIds: [id], use: false, reason: 'x' }))).toMatchObject({ status: 409 });
    } finally {
      setArchived(t.db, analyst, campaignId, { archived: false });
    }
    expect(imageValue().setAside).toBeNull();
  });
});
