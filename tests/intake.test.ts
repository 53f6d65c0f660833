// Intake: upload → check → import against a real migrated SQLite, every reader path on real-format
// files (CSV, TSV, long CSV, VOTable and FITS tables written by astropy, the Gaia FGK benchmark
// table), malformed files, merge on re-upload, atomicity and authorisation per role.
import { count, eq } from 'drizzle-orm';
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { APIContext } from 'astro';
import { projectRoot } from '../src/db/paths';
import { gaiaBrightCorrection } from '../src/core/input/survey-rules';
import { measurements, stars, uploads } from '../src/db/schema';
import type { Actor } from '../src/server/context';
import { IntakeError } from '../src/server/intake/errors';
import { bandForFilter, checkUpload, createUpload, getUpload, importUpload, type CheckSummary, type ImportSummary, type UploadDetail } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs, type RunHooks } from '../src/server/intake/run';
import { deletePreset, listPresets, savePreset } from '../src/server/intake/presets';
import type { IntakeConfig } from '../src/server/intake/storage';
import { POST as postUpload, GET as listUploadsRoute } from '../src/pages/api/campaigns/[id]/uploads/index';
import { POST as postImport } from '../src/pages/api/campaigns/[id]/uploads/[uploadId]/import';
import { GET as getJobRoute } from '../src/pages/api/campaigns/[id]/uploads/[uploadId]/jobs/[jobId]';
import { createTestApp, type TestApp } from './setup/db';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';

const root = projectRoot();
const fixture = (...p: string[]) => readFileSync(path.join(root, 'fixtures', ...p));
const BENCHMARK = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');

let t: TestApp;
let analyst: Actor;
let campaignId: string;
let config: IntakeConfig;

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
  config = { dataDir: path.dirname(t.filePath), maxBytes: 5 * 1024 * 1024 };
});
afterEach(() => t.cleanup());

function multipart(name: string, bytes: Uint8Array | string, type = 'text/csv'): Request {
  const form = new FormData();
  form.append('file', new Blob([bytes as BlobPart], { type }), name);
  return new Request('http://127.0.0.1/upload', { method: 'POST', body: form });
}

// Reading, checking and importing are jobs (decision record 0018): here they run inline, one after
// the other, and the finished job's answer (or refusal) is what the test sees.
async function upload(name: string, bytes: Uint8Array | string, type?: string): Promise<UploadDetail> {
  const u = await createUpload(t.app, analyst, campaignId, multipart(name, bytes, type), config);
  expect(u.job).toMatchObject({ kind: 'read', status: 'pending' });
  await drainIntakeJobs(t.db);
  outcomeOf(t.db, u.job!.id);
  return getUpload(t.db, campaignId, u.id);
}

async function check(uploadId: string, body: unknown): Promise<CheckSummary> {
  const job = checkUpload(t.app, analyst, campaignId, uploadId, body);
  await drainIntakeJobs(t.db);
  return outcomeOf(t.db, job.id).check as CheckSummary;
}

async function importNow(uploadId: string, body: unknown, hooks: RunHooks = {}): Promise<ImportSummary> {
  const job = importUpload(t.app, analyst, campaignId, uploadId, body);
  await drainIntakeJobs(t.db, hooks);
  return outcomeOf(t.db, job.id).import as ImportSummary;
}

function counts() {
  return {
    stars: t.db.select({ n: count() }).from(stars).get()!.n,
    measurements: t.db.select({ n: count() }).from(measurements).get()!.n,
  };
}

async function rejected(p: Promise<unknown> | (() => unknown)): Promise<IntakeError> {
  try {
    await (typeof p === 'function' ? p() : p);
  } catch (err) {
    expect(err).toBeInstanceOf(IntakeError);
    return err as IntakeError;
  }
  throw new Error('expected the intake to refuse');
}

function mappingOf(u: UploadDetail) {
  return { layout: u.detected!.layout, columns: u.detected!.columns };
}

async function uploadAndImport(name: string, bytes: Uint8Array | string, extra: Record<string, unknown> = {}) {
  const u = await upload(name, bytes);
  return { u, result: await importNow(u.id, { mapping: mappingOf(u), rules: u.detected!.rules, ...extra }) };
}

describe('every reader path through upload → check → import', () => {
  it('CSV with catalogue-style names: detection, Gaia flux conversion, 2MASS quality rule, stored with the upload', async () => {
    const u = await upload('catalogue_wide.csv', fixture('intake', 'catalogue_wide.csv'));
    expect(u.format).toBe('csv');
    expect(u.sizeBytes).toBe(fixture('intake', 'catalogue_wide.csv').length);
    expect(u.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(u.preview[0][0]).toBe('ember-21');
    expect(u.detected!.rules.quality).toEqual([{ column: 'ph_qual', keep: ['A', 'B'] }]);
    const checked = await check(u.id, { mapping: mappingOf(u), rules: u.detected!.rules });
    // ember-21's W1mag 7.55 is brighter than the AllWISE W1 saturation onset 8.1 mag (WISE All-Sky
    // Explanatory Supplement, Cutri et al. 2012): left out by the survey rules, said in the report.
    expect(checked).toMatchObject({ rowCount: 3, starCount: 3, errorCount: 0, excludedByQuality: 1, leftOutBySurveyRules: 1 });
    expect(checked.report.find((e) => e.row === 0 && /1 W1 value left out as saturated/.test(e.message))!.message).toMatch(/W1 7\.55 is brighter than the bright limit 8\.1 mag/);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });

    const r = await importNow(u.id, { mapping: mappingOf(u), rules: u.detected!.rules });
    expect(r).toMatchObject({ starsCreated: 3, measurementsCreated: 3 * 6 - 1 - 1, source: 'catalogue_wide.csv' });
    const s = t.db.select().from(stars).where(eq(stars.starKey, 'ember-22')).get()!;
    expect(s).toMatchObject({ campaignId, raDeg: 11.5, decDeg: -21, parallaxMas: 8.4, parallaxErrMas: 0.05 });
    const ms = t.db.select().from(measurements).where(eq(measurements.starId, s.id)).all();
    expect(ms.map((m) => m.bandKey).sort()).toEqual(['G', 'H', 'J', 'V', 'W1']); // Ks has quality C
    expect(ms.every((m) => m.uploadId === u.id)).toBe(true);
    expect(ms.find((m) => m.bandKey === 'H')!.quality).toBe('B');
    // G = −2.5 log10(1.2e6) + 25.6873668 (Gaia DR3 Vega zero-point, Riello et al. 2021)
    expect(ms.find((m) => m.bandKey === 'G')!.mag).toBeCloseTo(-2.5 * Math.log10(1.2e6) + 25.6873668, 10);
    expect(t.db.select().from(uploads).where(eq(uploads.id, u.id)).get()).toMatchObject({ status: 'imported', importedRowCount: 3, uploadedById: analyst.id });
    // The stored file is kept after import as the record behind the measurements (docs/decisions/0013):
    // still there, and still the bytes whose checksum the upload row holds.
    const row = t.db.select().from(uploads).where(eq(uploads.id, u.id)).get()!;
    expect(createHash('sha256').update(readFileSync(row.storedPath)).digest('hex')).toBe(row.sha256);
  });

  it('TSV with canonical names, including an upper limit and fluxes in Jy', async () => {
    const { u, result } = await uploadAndImport('canonical_wide.tsv', fixture('intake', 'canonical_wide.tsv'));
    expect(u.format).toBe('tsv');
    expect(result).toMatchObject({ starsCreated: 2, measurementsCreated: 7, errorCount: 0 });
    const w4 = t.db.select().from(measurements).where(eq(measurements.bandKey, 'W4')).get()!;
    expect(w4).toMatchObject({ mag: 7.9, upperLimit: true });
    const w1 = t.db.select().from(measurements).where(eq(measurements.bandKey, 'W1')).all();
    expect(w1.map((m) => m.fnuJy).sort()).toEqual([0.35, 0.52]);
  });

  it('long CSV: one row per star and band', async () => {
    const { u, result } = await uploadAndImport('canonical_long.csv', fixture('intake', 'canonical_long.csv'));
    expect(u.detected!.layout).toBe('long');
    expect(result).toMatchObject({ starsCreated: 2, measurementsCreated: 5 });
    expect(t.db.select().from(stars).where(eq(stars.starKey, 'ember-41')).get()!.parallaxMas).toBe(14.2);
  });

  it('VOTable (TABLEDATA, written by astropy): masked cells are empty, Qflg quality letters apply', async () => {
    const { u, result } = await uploadAndImport('stars.xml', fixture('votable', 'wide_tabledata.vot'));
    expect(u.format).toBe('votable');
    expect(u.units[u.columns.indexOf('Vmag')]).toBe('mag');
    // ember-12 has Qflg ABC: J is A, kept; ember-13 has no V (masked).
    expect(result).toMatchObject({ starsCreated: 4, errorCount: 0 });
    const e13 = t.db.select().from(stars).where(eq(stars.starKey, 'ember-13')).get()!;
    expect(t.db.select().from(measurements).where(eq(measurements.starId, e13.id)).all().map((m) => m.bandKey).sort()).toEqual(['J', 'W1']);
  });

  it('FITS binary table written by astropy, whatever the file is called', async () => {
    const { u, result } = await uploadAndImport('looks-like.csv', fixture('intake', 'wide_table.fits'), {});
    expect(u.format).toBe('fits-table');
    expect(result).toMatchObject({ starsCreated: 4, errorCount: 0 });
    const e11 = t.db.select().from(stars).where(eq(stars.starKey, 'ember-11')).get()!;
    expect(e11).toMatchObject({ raDeg: 12.5, parallaxMas: 21.3 });
  });

  it('the Gaia FGK benchmark FITS table (Soubiran et al. 2024): 2MASS letters, Gaia fluxes, WISE', async () => {
    expect(existsSync(BENCHMARK)).toBe(true);
    const u = await upload('gbs_v3_dev_half.fits', readFileSync(BENCHMARK));
    expect(u.format).toBe('fits-table');
    const roles = Object.fromEntries(Object.entries(u.detected!.columns).map(([c, a]) => [c, a.band ? `${a.band}:${a.role}` : a.role]));
    expect(roles).toMatchObject({ hip: 'id', ra: 'ra', parallax: 'parallax', phot_g_mean_flux: 'G:gaia_flux', ks_m: 'Ks:mag', ph_qual_tmass: 'quality', w1mpro: 'W1:mag' });
    // Not every benchmark star has a HIP number: use the always-present HD name as the id instead.
    const mapping = mappingOf(u);
    mapping.columns.hip = { role: 'ignore' };
    mapping.columns.hd = { role: 'id' };
    const checked = await check(u.id, { mapping, rules: u.detected!.rules });
    const r = await importNow(u.id, { mapping, rules: u.detected!.rules, importValidRows: true });
    expect(r.starsCreated).toBe(checked.starCount);
    expect(r.starsCreated + r.rejectedRows).toBe(96);
    // HIP 101345 = HD 195564: Gaia G from the flux reproduces the archive's phot_g_mean_mag 5.4923334,
    // then moved by Gaia's bright-star correction of G (EDR3 documentation §5.5.2, eq. 5.29: +0.0120 at G 5.49).
    const s = t.db.select().from(stars).where(eq(stars.starKey, 'HD195564')).get()!;
    const g = t.db.select().from(measurements).where(eq(measurements.starId, s.id)).all().find((m) => m.bandKey === 'G')!;
    expect(g.mag).toBeCloseTo(5.4923334 + gaiaBrightCorrection('G', 5.4923334)!, 6);
    expect(gaiaBrightCorrection('G', 5.4923334)).toBeCloseTo(0.0120, 4);
    // Its 2MASS letters are DDE: no 2MASS band passes the A/B rule.
    const bands = t.db.select().from(measurements).where(eq(measurements.starId, s.id)).all().map((m) => m.bandKey);
    expect(bands).not.toContain('J');
    // Its W1 4.106 and W2 3.355 are brighter than the AllWISE saturation onsets 8.1 and 6.7 mag (WISE
    // All-Sky Explanatory Supplement, Cutri et al. 2012): left out by the survey rules; W4 3.97 is fainter than −0.4.
    expect(bands).not.toContain('W1');
    expect(bands).toContain('W4');
    expect(checked.leftOutBySurveyRules).toBeGreaterThan(200);
    expect(checked.nativeUpperLimits).toBe(0);
    expect(checked.possibleCompanions).toBe(2);
    // The validation report says so once per band, with the limit's source, before any row.
    const w1 = checked.report.find((e) => /W1 values left out as saturated/.test(e.message))!;
    expect(w1).toMatchObject({ row: 0, severity: 'warning' });
    expect(w1.message).toMatch(/brighter than the bright limit 8\.1 mag \(WISE All-Sky Explanatory Supplement \(Cutri et al\. 2012\)/);
    expect(checked.report.some((e) => /stars with Gaia RUWE above 1\.4 .*flagged possible_companion/.test(e.message))).toBe(true);
  });

  it('FITS image header: metadata on the measurement, band from FILTER', async () => {
    // The fixture's FILTER is 'V'; this copy says 'Ks' (the card rewritten in place, same 80
    // columns), so a suggestion that ignored FILTER could not pass.
    const bytes = Buffer.from(fixture('fits', 'image_header.fits'));
    const card = bytes.indexOf("FILTER  = 'V       '");
    expect(card).toBeGreaterThanOrEqual(0);
    bytes.write("FILTER  = 'Ks      '", card, 'latin1');
    const u = await upload('frame.fits', new Uint8Array(bytes));
    expect(u.format).toBe('fits-image');
    expect(u.observation!.filter).toBe('Ks');
    expect(u.suggestedBand).toBe('Ks');
    const band = u.suggestedBand!;
    const r = await importNow(u.id, { rules: { quality: [] }, image: { starId: 'ember-51', band, mag: 10.5, magErr: 0.03 } });
    expect(r.measurementsCreated).toBe(1);
    const m = t.db.select().from(measurements).get()!;
    expect(m).toMatchObject({ bandKey: band, mag: 10.5, source: 'frame.fits' });
    expect(m.observation).toMatchObject({ filter: u.observation!.filter, image: 'frame.fits' });
  });
});

describe('bandForFilter: the band a FITS FILTER value names', () => {
  const keys = ['U', 'B', 'V', 'R', 'I', 'J', 'H', 'Ks', 'u', 'g', 'G'];
  it.each([
    ['V', 'V'],
    [' Ks ', 'Ks'],
    ['J 2MASS', 'J'],
    ['R_Bessell', 'R'],
    ['ks', 'Ks'],
    ['h', 'H'],
  ])('%j → %s', (filter, band) => expect(bandForFilter(filter, keys)).toBe(band));
  it.each([[undefined], [''], ['Halpha'], ['W1']])('%j names no band', (filter) => expect(bandForFilter(filter, keys)).toBeUndefined());
  it('an exact key wins over a case-insensitive one; two case-only candidates name none', () => {
    expect(bandForFilter('u', keys)).toBe('u');
    expect(bandForFilter('G', keys)).toBe('G');
    expect(bandForFilter('kp', ['Kp', 'KP'])).toBeUndefined();
  });
});

describe('malformed files are rejected with a clear message and nothing imported', () => {
  async function expectUnreadable(name: string, bytes: Uint8Array | string, message: RegExp) {
    const before = counts();
    const err = await rejected(upload(name, bytes));
    expect(err.status).toBe(422);
    expect(err.message).toMatch(message);
    expect(err.message.startsWith(name)).toBe(true);
    expect(counts()).toEqual(before);
    const row = t.db.select().from(uploads).where(eq(uploads.id, err.extra.uploadId!)).get()!;
    expect(row.status).toBe('rejected');
    expect(existsSync(row.storedPath)).toBe(false);
    // and it cannot be imported later
    const again = await rejected(() => importUpload(t.app, analyst, campaignId, row.id, { mapping: { layout: 'wide', columns: {} }, rules: { quality: [] } }));
    expect(again.status).toBe(409);
  }

  it('truncated FITS', async () => {
    const bytes = readFileSync(BENCHMARK);
    await expectUnreadable('half.fits', bytes.subarray(0, 2880 * 3 + 100), /not a readable FITS file|cannot be read/);
  });

  it('wrong BITPIX', async () => {
    const bytes = Buffer.from(fixture('intake', 'wide_table.fits'));
    const at = bytes.indexOf('BITPIX  =');
    bytes.write('BITPIX  =                   12', at, 'latin1');
    await expectUnreadable('bitpix.fits', bytes, /BITPIX/);
  });

  it('XML that is not a VOTable', async () => {
    await expectUnreadable('cat.xml', fixture('votable', 'not_a_votable.xml'), /not a VOTable \(its root element is <catalogue>/);
  });

  it('a binary file named .csv', async () => {
    const bytes = new Uint8Array(4096).map((_, i) => (i * 37) % 256);
    await expectUnreadable('photometry.csv', bytes, /binary content/);
  });

  it('an empty file', async () => {
    await expectUnreadable('empty.csv', '', /the file is empty/);
  });

  it('an over-size upload: 413, no record, no file left on disk', async () => {
    config.maxBytes = 1000;
    const err = await rejected(upload('big.csv', 'id,V,V_err\n' + 'ember-01,9.1,0.02\n'.repeat(200)));
    expect(err.status).toBe(413);
    expect(err.message).toMatch(/larger than the upload limit of 1000 bytes/);
    expect(t.db.select({ n: count() }).from(uploads).get()!.n).toBe(0);
    const dir = path.join(config.dataDir, 'uploads', campaignId);
    expect(existsSync(dir) ? readdirSync(dir) : []).toEqual([]);
  });

  it('CSV with ragged rows: the report names row and line; import refused unless valid rows are chosen', async () => {
    const csv = 'id,V,V_err\nember-01,9.1,0.02\nember-02,9.5\nember-03,x,0.02\nember-03,9.9,-0.1\n,9.0,0.01\nember-04,9.2,0.02\n';
    const u = await upload('ragged.csv', csv);
    const mapping = mappingOf(u);
    const err = await rejected(importNow(u.id, { mapping, rules: { quality: [] } }));
    expect(err.status).toBe(422);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
    const report = err.extra.report!;
    expect(report.map((r) => [r.file, r.row, r.line, r.column ?? null])).toEqual([
      ['ragged.csv', 2, 3, null],
      ['ragged.csv', 3, 4, 'V'],
      ['ragged.csv', 4, 5, 'id'],
      ['ragged.csv', 5, 6, 'id'],
    ]);
    expect(report[0].message).toMatch(/has 2 values but the header has 3 columns/);
    expect(report[1].message).toMatch(/"x" is not a number/);
    expect(report[2].message).toMatch(/duplicate star id "ember-03"/);
    expect(report[3].message).toMatch(/missing star id/);
    // the report is kept with the upload
    expect(getUpload(t.db, campaignId, u.id).report).toHaveLength(4);

    const r = await importNow(u.id, { mapping, rules: { quality: [] }, importValidRows: true });
    expect(r).toMatchObject({ starsCreated: 2, errorCount: 4 });
    expect(t.db.select().from(uploads).where(eq(uploads.id, u.id)).get()!.report).toHaveLength(4);
  });

  it('the upload, reopened, shows the mapping last checked (the one an import uses), not the detected one', async () => {
    const u = await upload('reopen.csv', 'id,V,V_err,B,B_err\nember-01,9.1,0.02,9.6,0.03\nember-02,9.5,0.02,10.0,0.03\n');
    // On arrival the detected mapping is the one checked.
    expect(u.checked).toEqual({ mapping: mappingOf(u), rules: u.detected!.rules });
    const edited = { layout: 'wide', columns: { ...u.detected!.columns, B: { role: 'ignore' }, B_err: { role: 'ignore' } } };
    const summary = await check(u.id, { mapping: edited, rules: { quality: [] } });
    expect(summary.measurementCount).toBe(2);
    const reopened = getUpload(t.db, campaignId, u.id);
    expect(reopened.checked).toEqual({ mapping: edited, rules: { quality: [] } });
    expect(reopened.detected!.columns.B).toMatchObject({ role: 'mag', band: 'B' });
    // Importing with what is shown imports what was checked: V only.
    const r = await importNow(u.id, { mapping: reopened.checked!.mapping, rules: reopened.checked!.rules });
    expect(r).toMatchObject({ starsCreated: 2 });
    expect(counts()).toEqual({ stars: 2, measurements: 2 });
  });

  it('negative error and unknown band in a long file', async () => {
    const csv = 'id,band,mag,mag_err\nember-01,V,9.1,-0.02\nember-02,Vmag,9.5,0.02\n';
    const u = await upload('long.csv', csv);
    const err = await rejected(importNow(u.id, { mapping: mappingOf(u), rules: { quality: [] } }));
    const msgs = err.extra.report!.map((r) => `${r.row}/${r.column}: ${r.message}`);
    expect(msgs[0]).toBe('1/mag_err: row 1 (file line 2), column mag_err: negative error -0.02');
    expect(msgs[1]).toMatch(/^2\/band: .*unknown band "Vmag"/);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });
});

describe('merge and atomicity', () => {
  it('re-uploading the same star merges by band and source: one row per (star, band, source), updated', async () => {
    await uploadAndImport('a.csv', 'id,V,V_err,Ks,Ks_err,parallax_mas\nember-01,9.10,0.02,7.5,0.02,10\n', { source: 'survey-x' });
    const second = await uploadAndImport('b.csv', 'id,V,V_err,J,J_err,ra\nember-01,9.15,0.01,8.0,0.02,15.5\n', { source: 'survey-x' });
    expect(second.result).toMatchObject({ starsCreated: 0, starsUpdated: 1, measurementsCreated: 1, measurementsUpdated: 1 });
    expect(counts()).toEqual({ stars: 1, measurements: 3 });
    const v = t.db.select().from(measurements).where(eq(measurements.bandKey, 'V')).all();
    expect(v).toHaveLength(1);
    expect(v[0]).toMatchObject({ mag: 9.15, magErr: 0.01, uploadId: second.u.id });
    // empty cells keep what the star had; new values are taken
    expect(t.db.select().from(stars).get()).toMatchObject({ parallaxMas: 10, raDeg: 15.5 });
    // another source in the same band is kept apart
    await uploadAndImport('c.csv', 'id,V,V_err\nember-01,9.2,0.03\n', { source: 'survey-y' });
    expect(t.db.select().from(measurements).where(eq(measurements.bandKey, 'V')).all()).toHaveLength(2);
  });

  it('a failure mid-import leaves nothing: stars, measurements and the upload status roll back', async () => {
    await uploadAndImport('first.csv', 'id,V,V_err\nember-01,9.1,0.02\n');
    const before = counts();
    const u = await upload('second.csv', 'id,V,V_err\nember-01,9.3,0.02\nember-02,9.4,0.02\nember-03,9.5,0.02\n');
    await expect(
      importNow(u.id, { mapping: mappingOf(u), rules: { quality: [] } }, {
        afterStar: (id) => {
          if (id === 'ember-02') throw new Error('disk full (simulated)');
        },
      }),
    ).rejects.toThrow('disk full');
    expect(counts()).toEqual(before);
    expect(t.db.select().from(measurements).get()!.mag).toBe(9.1);
    expect(t.db.select().from(uploads).where(eq(uploads.id, u.id)).get()!.status).toBe('received');
  });

  it('a database constraint failing mid-import rolls everything back too', async () => {
    // A real SQLite trigger refuses the third star, as a full disk or a constraint would.
    t.sqlite.exec("CREATE TRIGGER refuse_third BEFORE INSERT ON stars WHEN NEW.star_key = 'ember-03' BEGIN SELECT RAISE(ABORT, 'refused by test trigger'); END");
    const u = await upload('three.csv', 'id,V,V_err\nember-01,9.3,0.02\nember-02,9.4,0.02\nember-03,9.5,0.02\n');
    await expect(importNow(u.id, { mapping: mappingOf(u), rules: { quality: [] } })).rejects.toThrow('refused by test trigger');
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });
});

describe('mapping presets', () => {
  it('saves, replaces by name, lists and deletes per campaign', async () => {
    const mapping = { layout: 'wide' as const, columns: { Name: { role: 'id' as const }, Vmag: { role: 'mag' as const, band: 'V' } } };
    const a = savePreset(t.db, analyst, campaignId, { name: 'Ember catalogue', mapping, rules: { quality: [{ column: 'ph_qual', keep: ['A'] }] } });
    expect(a.replaced).toBe(false);
    const b = savePreset(t.db, analyst, campaignId, { name: 'Ember catalogue', mapping, rules: { quality: [] } });
    expect(b).toMatchObject({ replaced: true, preset: { id: a.preset.id } });
    expect(listPresets(t.db, campaignId)).toHaveLength(1);
    const other = makeCampaign(t.app, analyst).id;
    expect(listPresets(t.db, other)).toEqual([]);
    expect(() => deletePreset(t.db, other, a.preset.id)).toThrow(/No mapping preset/);
    deletePreset(t.db, campaignId, a.preset.id);
    expect(listPresets(t.db, campaignId)).toEqual([]);
  });
});

describe('authorisation per role (the real API handlers)', () => {
  function ctx(actor: Actor | null, request: Request, params: Record<string, string>) {
    return { locals: { app: t.app, actor }, params, request } as unknown as APIContext;
  }

  it('analyst may upload; reviewer and collaborator get 403; anonymous 401', async () => {
    const reviewer = await makeUser(t.app);
    const collaborator = await makeUser(t.app);
    await addToCampaign(t.app, analyst, campaignId, reviewer, ['reviewer']);
    await addToCampaign(t.app, analyst, campaignId, collaborator, ['collaborator']);
    const csv = fixture('intake', 'canonical_long.csv');
    const ok = await postUpload(ctx(analyst, multipart('l.csv', csv), { id: campaignId }));
    expect(ok.status).toBe(201);
    const uploadId = ((await ok.json()) as { upload: { id: string } }).upload.id;
    for (const who of [reviewer, collaborator]) {
      expect((await postUpload(ctx(who, multipart('l.csv', csv), { id: campaignId }))).status).toBe(403);
      expect((await listUploadsRoute(ctx(who, new Request('http://x/'), { id: campaignId }))).status).toBe(403);
      const imp = new Request('http://x/', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ rules: { quality: [] } }) });
      expect((await postImport(ctx(who, imp, { id: campaignId, uploadId }))).status).toBe(403);
    }
    const anon = await postUpload(ctx(null, multipart('l.csv', csv), { id: campaignId }));
    expect(anon.status).toBe(401);
    expect(await anon.json()).toMatchObject({ error: { code: 'unauthenticated' } });
    expect(t.db.select({ n: count() }).from(uploads).get()!.n).toBe(1);
  });

  it('the import route answers 422 with the report, and 200 with counts', async () => {
    const u = await upload('r.csv', 'id,V,V_err\nember-01,9.1,0.02\nember-02,oops,0.02\n');
    const body = (importValidRows: boolean) =>
      new Request('http://x/', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ mapping: mappingOf(u), rules: { quality: [] }, importValidRows }) });
    // The route queues the import (202 with the job); the finished job carries the refusal or the counts.
    const answerOf = async (res: Response) => {
      expect(res.status).toBe(202);
      const { job } = (await res.json()) as { job: { id: string; status: string } };
      expect(job.status).toBe('pending');
      await drainIntakeJobs(t.db);
      const got = await getJobRoute(ctx(analyst, new Request('http://x/'), { id: campaignId, uploadId: u.id, jobId: job.id }));
      expect(got.status).toBe(200);
      return ((await got.json()) as { job: { status: string; refusal?: { status: number; error: { code: string }; report: { row: number; column: string }[] }; import?: { starsCreated: number } } }).job;
    };
    const refused = await answerOf(await postImport(ctx(analyst, body(false), { id: campaignId, uploadId: u.id })));
    expect(refused.status).toBe('failed');
    expect(refused.refusal!.status).toBe(422);
    expect(refused.refusal!.error.code).toBe('validation_failed');
    expect(refused.refusal!.report[0]).toMatchObject({ file: 'r.csv', row: 2, column: 'V' });
    const done = await answerOf(await postImport(ctx(analyst, body(true), { id: campaignId, uploadId: u.id })));
    expect(done.status).toBe('done');
    expect(done.import!.starsCreated).toBe(1);
  });
});
