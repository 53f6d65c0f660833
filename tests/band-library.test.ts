// The band library as versions: immutable, every change a new version with an audit event, fits
// recording their version, stale detection when a band a fit used changes, re-fitting stale stars,
// bad curve files rejected with nothing saved, and only admins changing the library.
// Real migrated SQLite per test; fits made by the real batch + worker path.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { starterBandLibrary } from '../src/core/bands';
import { zeroMagnitudeFlambdaCgs } from '../src/core/magnitude';
import type { Actor } from '../src/server/context';
import {
  createBand,
  getCurrentLibrary,
  getCurrentVersion,
  getLibrary,
  listHistory,
  listVersions,
  STARTER_VERSION_LABEL,
  updateZeroPoint,
} from '../src/server/band-library';
import { getBatch, startBatch } from '../src/server/batches';
import { cataloguePage } from '../src/server/catalogue';
import { parseCataloguePageRequest } from '../src/web/catalogue-params';
import { bandKeys as intakeBandKeys } from '../src/server/intake/intake';
import { decide, fitHistory } from '../src/server/review';
import { bandUsage, checkStale, refitStaleStars, staleChecker, staleFits } from '../src/server/stale';
import { GET as listBandsRoute, POST as createBandRoute } from '../src/pages/api/admin/bands/index';
import { POST as previewRoute } from '../src/pages/api/admin/bands/preview';
import { POST as zeroPointRoute } from '../src/pages/api/admin/bands/[key]/zero-point';
import { GET as bandRoute } from '../src/pages/api/admin/bands/[key]';
import { GET as staleRoute, POST as refitRoute } from '../src/pages/api/campaigns/[id]/refit-stale';
import { createWorker } from '../workers/runner';
import { createTestApp, type TestApp } from './setup/db';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';

const fixtures = path.resolve(__dirname, '../fixtures/bands');
const zCurve = () => ({ fileName: 'lanternfield-z.ecsv', content: readFileSync(path.join(fixtures, 'lanternfield-z.ecsv'), 'utf8'), wavelengthUnit: 'nm', convention: 'photon' });
const zBand = (key = 'Lz') => ({
  key,
  label: 'Lanternfield z',
  system: 'Lanternfield Survey',
  magnitudeSystem: 'ab',
  zeroPoint: { fnuJy: 3631, relErr: 0, source: 'AB system, Oke & Gunn 1983' },
  citation: 'Invented test band of the Lanternfield Survey',
});
const KS_ZP = { fLambdaCgs: 4.283e-11 * 1.05, relErr: 0.019, source: 'Recalibrated by the Lanternfield team (invented, +5 %)' };

type Route = (ctx: never) => Promise<Response> | Response;
async function call(t: TestApp, route: Route, actor: Actor | null, params: Record<string, string> = {}, body?: unknown) {
  const url = new URL('http://127.0.0.1/api/test');
  const request = new Request(url, body === undefined ? {} : { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  const res = await route({ locals: { app: t.app, actor, authMethod: actor ? 'session' : null }, params, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

const count = (t: TestApp, table: string) => t.sqlite.prepare(`SELECT count(*) FROM ${table}`).pluck().get() as number;

let t: TestApp;
let admin: Actor;
beforeEach(async () => {
  t = createTestApp();
  admin = await makeUser(t.app, { kind: 'admin' });
});
afterEach(() => t.cleanup());

describe('versions', () => {
  it('start as the starter library under its own label, exactly', () => {
    const v = getCurrentVersion(t.db);
    expect(v.label).toBe(STARTER_VERSION_LABEL);
    expect(v.label).toBe(starterBandLibrary().version);
    const lib = getCurrentLibrary(t.db);
    expect(Object.keys(lib.bands)).toEqual(Object.keys(starterBandLibrary().bands));
    for (const [k, b] of Object.entries(starterBandLibrary().bands)) expect(lib.bands[k], k).toEqual(b);
  });

  it('are immutable: the database refuses to change or delete a version or a definition', () => {
    getCurrentVersion(t.db);
    expect(() => t.sqlite.prepare("UPDATE band_definitions SET definition = '{}' WHERE key = 'V'").run()).toThrow(/immutable/);
    expect(() => t.sqlite.prepare("DELETE FROM band_library_entries WHERE key = 'V'").run()).toThrow(/immutable/);
    expect(() => t.sqlite.prepare("UPDATE band_library_versions SET reason = 'x'").run()).toThrow(/immutable/);
  });

  it('each change makes a new version sharing the unchanged bands; old versions load as they were; an audit event says who and why', () => {
    const before = getCurrentLibrary(t.db);
    const r = updateZeroPoint(t.db, admin, 'Ks', KS_ZP, 'New Ks calibration from our standards');
    expect(r.version.label).toBe('v2');
    expect(r.band.version).toBe(before.bands.Ks.version + 1);
    const v2 = getLibrary(t.db, 'v2');
    expect(v2.bands.Ks.zeroPoint?.fLambdaCgs).toBeCloseTo(4.283e-11 * 1.05, 20);
    expect(getLibrary(t.db, STARTER_VERSION_LABEL).bands.Ks).toEqual(starterBandLibrary().bands.Ks);
    // Copy-on-write: one new definition, every other band shared.
    expect(count(t, 'band_definitions')).toBe(Object.keys(before.bands).length + 1);
    expect(v2.bands.V).toBe(before.bands.V);
    const added = createBand(t.db, admin, { band: zBand(), curve: zCurve(), reason: 'Our survey camera z band' });
    expect(added.version.label).toBe('v3');
    expect(getCurrentLibrary(t.db).bands.Lz.pivotAngstrom).toBeCloseTo(9098.27, 1);
    expect(getLibrary(t.db, 'v2').bands.Lz).toBeUndefined();
    const audit = t.sqlite.prepare("SELECT actor_id, action, details FROM audit_events WHERE action LIKE 'band_library.%' ORDER BY id").all() as { actor_id: string; action: string; details: string }[];
    expect(audit.map((a) => a.action)).toEqual(['band_library.zero_point_changed', 'band_library.band_added']);
    expect(audit.every((a) => a.actor_id === admin.id)).toBe(true);
    expect(JSON.parse(audit[0].details)).toMatchObject({ bandKey: 'Ks', version: 'v2', parentVersion: 'starter-1', reason: 'New Ks calibration from our standards', numbersChanged: true });
    expect(listVersions(t.db).versions.map((v) => v.label)).toEqual(['v3', 'v2', 'starter-1']);
    expect(listHistory(t.db, 'Ks').map((h) => [h.version.label, h.bandVersion])).toEqual([
      ['v2', 2],
      ['starter-1', 1],
    ]);
  });

  it('a reason is required, and a zero-point must fit the magnitude system; nothing is saved otherwise', () => {
    getCurrentVersion(t.db);
    const n = count(t, 'band_library_versions');
    expect(() => updateZeroPoint(t.db, admin, 'Ks', KS_ZP, '')).toThrow(/reason is required/);
    expect(() => updateZeroPoint(t.db, admin, 'Ks', { ...KS_ZP, fnuJy: 600 }, 'both given')).toThrow(/either as fLambdaCgs .* or as fnuJy/);
    expect(() => updateZeroPoint(t.db, admin, 'G', { fnuJy: 3000, relErr: 0, source: 'wrong AB value' }, 'AB must stay 3631')).toThrow(/AB band: its zero-point is F_ν,0 = 3631 Jy/);
    expect(() => updateZeroPoint(t.db, admin, 'Nope', KS_ZP, 'no such band')).toThrow(/no band "Nope"/);
    // The form shows 4.2829999999999996e-11 as 4.283e-11; sent back unchanged, it is no change.
    const ks = starterBandLibrary().bands.Ks.zeroPoint!;
    expect(() => updateZeroPoint(t.db, admin, 'Ks', { ...ks, fLambdaCgs: Number(ks.fLambdaCgs!.toPrecision(10)) }, 'resubmitted as shown')).toThrow(/already has exactly this zero-point/);
    expect(count(t, 'band_library_versions')).toBe(n);
  });
});

describe('stale fits and re-fitting', () => {
  async function world() {
    const analyst = await makeUser(t.app);
    const reviewer = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    await addToCampaign(t.app, analyst, campaign.id, reviewer, ['reviewer']);
    insertMockStars(t.db, { campaignId: campaign.id, count: 6, seed: 5 });
    // Blackbody mock stars: Planck only, so χ² measures the zero-point change, not the model's mismatch.
    const batch = startBatch(t.app, analyst, campaign.id, { options: { law: 'ccm89', floorFraction: 0.01, planckOnly: true } });
    await createWorker(t.app, { owner: 'test-1', drain: true, idleMs: 5 }).run();
    return { analyst, reviewer, campaign, batch };
  }

  it('change a zero-point: the old fits are stale, re-fit as a new batch on the new version, compare; old results and decisions stay readable with their version', async () => {
    const w = await world();
    expect(w.batch.bandLibraryVersion).toBe('starter-1');
    const oldFits = t.sqlite.prepare('SELECT * FROM fit_results WHERE batch_id = ? AND ok = 1 ORDER BY star_id').all(w.batch.id) as Record<string, any>[]; // eslint-disable-line @typescript-eslint/no-explicit-any
    expect(oldFits).toHaveLength(6);
    expect(oldFits.every((f) => f.band_library_version === 'starter-1' && / Ks( |$)/.test(' ' + f.bands_used))).toBe(true);
    decide(t.db, w.reviewer, oldFits[0].id, { decision: 'accepted', comment: 'fine' });
    expect(staleFits(t.db, w.campaign.id).total).toBe(0);
    // The band page says how many current fits a change would affect (keys case-sensitive).
    expect(bandUsage(t.db, 'Ks')).toEqual([{ campaignId: w.campaign.id, campaignName: w.campaign.name, fits: 6 }]);
    expect(bandUsage(t.db, 'KS')).toEqual([]);
    expect(bandUsage(t.db, 'W4')).toEqual([]);

    // A change to a band the fits did not use, and a change of wording only: nothing goes stale.
    updateZeroPoint(t.db, admin, 'W4', { fnuJy: 8.4, relErr: 0.015, isophotalWavelengthAngstrom: 220883, source: 'invented recalibration' }, 'W4 recalibration');
    updateZeroPoint(t.db, admin, 'Ks', { ...starterBandLibrary().bands.Ks.zeroPoint!, source: 'Cohen, Wheaton & Megeath 2003, AJ 126, 1090 (Table 1), wording corrected' }, 'Fix the citation');
    expect(getCurrentVersion(t.db).label).toBe('v3');
    expect(staleFits(t.db, w.campaign.id).total).toBe(0);

    // The Ks zero-point changes: every fit that used Ks is stale, and says which band changed.
    const changed = await call(t, zeroPointRoute, admin, { key: 'Ks' }, { zeroPoint: KS_ZP, reason: 'New Ks calibration' });
    expect(changed.status).toBe(201);
    // The campaign's analyst hears about it through the outbox (the reviewer does not: analysts re-fit).
    expect(changed.body.notified).toBe(1);
    const mail = t.sqlite.prepare("SELECT to_address, subject FROM outbox_messages WHERE subject LIKE 'Band Ks changed%'").all() as { to_address: string; subject: string }[];
    expect(mail).toEqual([{ to_address: w.analyst.email, subject: `Band Ks changed: 6 current fits in "${w.campaign.name}" are stale` }]);
    const stale = staleFits(t.db, w.campaign.id);
    expect(stale.total).toBe(6);
    expect(stale.currentVersion).toBe('v4');
    expect(stale.fits[0].changedBands).toEqual(['Ks']);
    expect(checkStale(t.db, { bandLibraryVersion: 'starter-1', bandsUsed: oldFits[0].bands_used })).toMatchObject({ stale: true, changedBands: ['Ks'], currentVersion: 'v4' });
    expect(checkStale(t.db, { bandLibraryVersion: 'starter-1', bandsUsed: 'B V G' }).stale).toBe(false);
    expect(staleChecker(t.db)({ bandLibraryVersion: 'v3', bandsUsed: 'J H Ks' })).toBe(true);
    // The catalogue marks the same rows.
    const catalogueRows = () => cataloguePage(t.db, w.campaign.id, parseCataloguePageRequest(new URLSearchParams('limit=50'))).rows;
    expect(catalogueRows().map((r) => [r.starKey, r.stale, r.bandLibraryVersion]).sort()).toEqual(stale.fits.map((f) => [f.starKey, true, 'starter-1']).sort());

    // Over HTTP: the reviewer may read the list, only an analyst may re-fit.
    expect((await call(t, staleRoute, w.reviewer, { id: w.campaign.id })).body.total).toBe(6);
    expect((await call(t, refitRoute, w.reviewer, { id: w.campaign.id }, {})).status).toBe(403);
    const refit = await call(t, refitRoute, w.analyst, { id: w.campaign.id }, {});
    expect(refit.status).toBe(201);
    expect(refit.body.stars).toBe(6);
    expect(refit.body.batches).toHaveLength(1);
    const newBatch = getBatch(t.db, refit.body.batches[0].id)!;
    expect(newBatch.bandLibraryVersion).toBe('v4');
    expect(newBatch.refitOfBatchId).toBe(w.batch.id);
    expect(newBatch.options).toEqual(getBatch(t.db, w.batch.id)!.options);
    await createWorker(t.app, { owner: 'test-2', drain: true, idleMs: 5 }).run();

    const newFits = t.sqlite.prepare('SELECT * FROM fit_results WHERE batch_id = ? ORDER BY star_id').all(newBatch.id) as Record<string, any>[]; // eslint-disable-line @typescript-eslint/no-explicit-any
    expect(newFits).toHaveLength(6);
    for (const [i, nf] of newFits.entries()) {
      const of = oldFits[i];
      expect(nf.band_library_version).toBe('v4');
      // The Ks magnitude converts to a flux 5 % higher with the new zero-point; other bands are unchanged.
      const oldObs = JSON.parse(of.detail).observed;
      const newObs = JSON.parse(nf.detail).observed;
      expect(newObs.Ks.fluxCgs / oldObs.Ks.fluxCgs).toBeCloseTo(1.05, 10);
      expect(newObs.V.fluxCgs).toBe(oldObs.V.fluxCgs);
      // …so the fit moves (χ² grows: the mock magnitudes were made with the old zero-point).
      expect(nf.chi2_red).toBeGreaterThan(of.chi2_red);
    }
    expect(zeroMagnitudeFlambdaCgs(getLibrary(t.db, 'v4').bands.Ks) / zeroMagnitudeFlambdaCgs(getLibrary(t.db, 'starter-1').bands.Ks)).toBeCloseTo(1.05, 12);
    expect(staleFits(t.db, w.campaign.id).total).toBe(0);
    expect(catalogueRows().every((r) => !r.stale && r.bandLibraryVersion === 'v4')).toBe(true);

    // The old result is unchanged and still says which version made it; its decision is kept.
    const again = t.sqlite.prepare('SELECT * FROM fit_results WHERE id = ?').get(oldFits[0].id) as Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any
    expect({ ...again, is_current: undefined, review_status: undefined }).toEqual({ ...oldFits[0], is_current: undefined, review_status: undefined });
    expect(again.band_library_version).toBe('starter-1');
    const history = fitHistory(t.db, oldFits[0].id);
    expect(history).toHaveLength(1);
    expect(history[0]).toMatchObject({ decision: 'accepted', comment: 'fine', batchId: w.batch.id });
    // The version it was made with still loads with the old Ks zero-point.
    expect(getLibrary(t.db, again.band_library_version).bands.Ks.zeroPoint).toEqual(starterBandLibrary().bands.Ks.zeroPoint);
  });

  it('re-fitting when nothing is stale is refused with a clear message', async () => {
    const w = await world();
    expect(() => refitStaleStars(t.app, w.analyst, w.campaign.id)).toThrow(/No fit in this campaign is stale/);
  });

  it('a batch started after a band was added records the new version and may exclude the new band; unknown keys are named', async () => {
    const w = await world();
    createBand(t.db, admin, { band: zBand(), curve: zCurve(), reason: 'Survey z band' });
    const b = startBatch(t.app, w.analyst, w.campaign.id, { options: { excludeBands: ['Lz'] } });
    expect(b.bandLibraryVersion).toBe('v2');
    // The intake maps columns to the bands of the current version, the new one included.
    expect(intakeBandKeys(t.db)).toContain('Lz');
    expect(() => startBatch(t.app, w.analyst, w.campaign.id, { options: { excludeBands: ['Lq'] } })).toThrow(/"Lq" is not a band key; known keys are .* Lz/);
  });
});

describe('adding a band from a curve file', () => {
  const bad: [string, Record<string, unknown>, RegExp][] = [
    ['non-monotonic wavelengths', { content: '5000 0\n5100 1\n5050 1\n5200 0\n', wavelengthUnit: 'angstrom' }, /bad\.txt, line 3, column 1 .*5050 Å goes back from 5100 Å/],
    ['a negative wavelength', { content: '-5000 0\n5100 1\n5200 0\n', wavelengthUnit: 'angstrom' }, /line 1, column 1 .*must be above 0/],
    ['a response that is all zero', { content: '5000 0\n5100 0\n5200 0\n', wavelengthUnit: 'angstrom' }, /response is zero on every row/],
    ['a unit that makes no sense for the values', { content: '4800 0\n5500 1\n6600 0\n', wavelengthUnit: 'um' }, /read in µm, the band would reach 6600 µm/],
  ];
  for (const [what, curve, message] of bad) {
    it(`rejects ${what} with a clear message, and saves nothing`, async () => {
      getCurrentVersion(t.db);
      const before = [count(t, 'band_library_versions'), count(t, 'band_definitions'), count(t, 'audit_events')];
      const preview = await call(t, previewRoute, admin, {}, { fileName: 'bad.txt', convention: 'photon', ...curve });
      expect(preview.status).toBe(400);
      expect(preview.body.error.message).toMatch(message);
      const r = await call(t, createBandRoute, admin, {}, { band: zBand(), curve: { fileName: 'bad.txt', convention: 'photon', ...curve }, reason: 'try a bad curve' });
      expect(r.status).toBe(400);
      expect(r.body.error.message).toMatch(message);
      expect([count(t, 'band_library_versions'), count(t, 'band_definitions'), count(t, 'audit_events')]).toEqual(before);
    });
  }

  it('rejects a duplicate band key (case-sensitive) with a 409, and saves nothing', async () => {
    getCurrentVersion(t.db);
    const n = count(t, 'band_library_versions');
    const dup = await call(t, createBandRoute, admin, {}, { band: zBand('Ks'), curve: zCurve(), reason: 'duplicate' });
    expect(dup.status).toBe(409);
    expect(dup.body.error.message).toMatch(/A band with the key "Ks" exists already \(2MASS Ks/);
    expect(count(t, 'band_library_versions')).toBe(n);
    expect((await call(t, createBandRoute, admin, {}, { band: zBand('kS'), curve: zCurve(), reason: 'case differs' })).status).toBe(201);
    expect((await call(t, createBandRoute, admin, {}, { band: zBand('kS'), curve: zCurve(), reason: 'again' })).status).toBe(409);
  });

  it('preview returns the parsed curve and its pivot without saving', async () => {
    getCurrentVersion(t.db);
    const n = count(t, 'band_definitions');
    const r = await call(t, previewRoute, admin, {}, zCurve());
    expect(r.status).toBe(200);
    expect(r.body.curve.pivotAngstrom).toBeCloseTo(9098.27, 1);
    expect(r.body.curve.wavelengthAngstrom[0]).toBe(8200);
    expect(count(t, 'band_definitions')).toBe(n);
  });
});

describe('authorisation: only admins change the library', () => {
  it('analyst, reviewer and collaborator get 403, anonymous 401; everyone signed in may read', async () => {
    const analyst = await makeUser(t.app);
    const reviewer = await makeUser(t.app);
    const collaborator = await makeUser(t.app, { kind: 'guest' });
    const campaign = makeCampaign(t.app, analyst);
    await addToCampaign(t.app, analyst, campaign.id, reviewer, ['reviewer']);
    await addToCampaign(t.app, analyst, campaign.id, collaborator, ['collaborator']);
    const create = { band: zBand(), curve: zCurve(), reason: 'Survey z band' };
    const zp = { zeroPoint: KS_ZP, reason: 'New Ks calibration' };
    for (const who of [analyst, reviewer, collaborator]) {
      expect((await call(t, createBandRoute, who, {}, create)).status).toBe(403);
      expect((await call(t, zeroPointRoute, who, { key: 'Ks' }, zp)).status).toBe(403);
      expect((await call(t, previewRoute, who, {}, zCurve())).status).toBe(403);
      expect((await call(t, listBandsRoute, who)).status).toBe(200);
    }
    expect((await call(t, createBandRoute, null, {}, create)).status).toBe(401);
    expect((await call(t, zeroPointRoute, null, { key: 'Ks' }, zp)).status).toBe(401);
    expect((await call(t, listBandsRoute, null)).status).toBe(401);
    expect(getCurrentVersion(t.db).label).toBe('starter-1');

    expect((await call(t, zeroPointRoute, admin, { key: 'Ks' }, zp)).status).toBe(201);
    expect((await call(t, createBandRoute, admin, {}, create)).status).toBe(201);
    const band = await call(t, bandRoute, analyst, { key: 'Ks' });
    expect(band.body.version).toBe('v3');
    expect(band.body.history.map((h: { version: { label: string } }) => h.version.label)).toEqual(['v2', 'starter-1']);
  });
});
