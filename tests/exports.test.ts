// Downloads of a real fitted catalogue in each format, read back and compared with the database:
// CSV (csv-parse, provenance '#' lines), JSON, VOTable (fast-xml-parser, and astropy.io.votable),
// FITS (our reader in src/core/input/fits-file.ts, and astropy.io.fits / astropy.table). astropy comes
// from Debian's python3-astropy under /usr/bin/python3, run with every warning turned into an error
// (scripts/references/read_exports.py). Also: the stream reads one consistent snapshot while the
// app keeps writing, and the route's authorisation.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { parse as parseCsv } from 'csv-parse/sync';
import { XMLParser } from 'fast-xml-parser';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { GET as downloadRoute } from '../src/pages/api/campaigns/[id]/downloads/[format]';
import { starterBandLibrary } from '../src/core/bands';
import { CATALOGUE_COLUMNS } from '../src/core/catalogue';
import { exportColumns } from '../src/server/exports/source';
import { FLAG_EXPLANATIONS } from '../src/core/fit';
import { readFits, readFitsTable } from '../src/core/input/fits-file';
import { projectRoot } from '../src/db/paths';
import type { CatalogueFilter } from '../src/server/catalogue';
import type { Actor } from '../src/server/context';
import { EXPORT_FORMAT_NAMES, exportChunks, type ExportFormat } from '../src/server/exports';
import { FITS_BLOCK } from '../src/server/exports/fits';
import { appVersion } from '../src/server/health';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { makeFittedCatalogue, refit } from './factories-catalogue';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
let analyst: Actor;
let collaborator: Actor;
let outsider: Actor;
let campaign: { id: string; name: string };
const CAMPAIGN_NAME = 'Brackenfell open cluster';

type DbRow = Record<string, string | number | null>;

beforeAll(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  collaborator = await makeUser(t.app, { kind: 'guest' });
  outsider = await makeUser(t.app);
  const c = makeCampaign(t.app, analyst, { name: CAMPAIGN_NAME });
  campaign = { id: c.id, name: c.name };
  await addToCampaign(t.app, analyst, c.id, collaborator, ['collaborator']);
  const f = await makeFittedCatalogue(t.app, analyst, c.id, { count: 90, fewBandsEvery: 17, noParallaxEvery: 6, seed: 21, options: { avMode: 'fitted', avMaxMag: 3 } });
  // A few stars re-fitted with another law: the catalogue holds their newer fits.
  const refitted = f.stars.filter((_, i) => i % 15 === 3).map((s) => s.starKey);
  await refit(t.app, analyst, c.id, refitted, { law: 'ccm89' });
  t.sqlite.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE batch_id = (SELECT id FROM batches WHERE campaign_id = ? ORDER BY created_at DESC LIMIT 1) AND ok = 1").run(c.id);
});
afterAll(() => t?.cleanup());

/** The expected rows, read here with plain SQL (not the export's own query). */
function dbRows(where = "f.review_status = 'accepted'"): DbRow[] {
  return t.sqlite
    .prepare(
      `SELECT s.star_key AS id, s.ra_deg AS ra, s.dec_deg AS dec, f.teff_k, f.teff_err_k, f.teff_err_formal_k, f.teff_lower_k, f.tbb_k, f.tbb_err_k, f.tbb_err_formal_k, f.tbb_lower_k, f.tbb_chi2_red, f.theta_mas, f.theta_err_mas,
         f.radius_rsun, f.radius_err_rsun, f.lum_lsun, f.lum_err_lsun, f.fbol_cgs, f.fbol_err_cgs, f.av_mag AS av, f.av_err_mag AS av_err, f.chi2_red,
         f.n_bands, f.bands_used, f.ir_excess_sigma, f.flags, f.lum_class, f.lum_class_source, f.feh_dex AS feh,
         CASE WHEN f.photosphere_name IS NULL THEN NULL ELSE f.photosphere_name || ' ' || f.photosphere_version END AS model, f.review_status, f.batch_id,
         coalesce((SELECT trim(CASE WHEN d.four_eyes_off = 1 THEN 'four_eyes_off ' ELSE '' END || CASE WHEN d.carried_from_decision_id IS NOT NULL THEN 'carried_over' ELSE '' END)
           FROM review_decisions d WHERE d.fit_result_id = f.id AND d.superseded_at IS NULL), '') AS review_mark
       FROM fit_results f JOIN stars s ON s.id = f.star_id
       WHERE f.campaign_id = ? AND f.id IN (SELECT id FROM fit_results g WHERE g.star_id = f.star_id ORDER BY g.ok DESC, (SELECT created_at FROM batches WHERE id = g.batch_id) DESC, g.id DESC LIMIT 1)
         AND ${where}
       ORDER BY s.star_key`,
    )
    .all(campaign.id) as DbRow[];
}

async function download(format: ExportFormat, filter: CatalogueFilter = { status: ['accepted'] }): Promise<{ bytes: Uint8Array; chunks: number }> {
  const parts: Uint8Array[] = [];
  for await (const c of exportChunks(t.db, campaign, filter, format)) parts.push(c);
  const bytes = new Uint8Array(parts.reduce((a, p) => a + p.length, 0));
  let at = 0;
  for (const p of parts) {
    bytes.set(p, at);
    at += p.length;
  }
  return { bytes, chunks: parts.length };
}

const text = (b: Uint8Array) => new TextDecoder().decode(b);
const numberColumns = CATALOGUE_COLUMNS.filter((c) => c.digits !== undefined || ['ra', 'dec', 'n_bands'].includes(c.name)).map((c) => c.name);

describe('CSV', () => {
  it('starts with the provenance as # lines, then the CLI header, then the accepted rows at the catalogue precision', async () => {
    const csv = text((await download('csv')).bytes);
    const lines = csv.split('\n');
    const comments = lines.filter((l) => l.startsWith('#'));
    expect(lines.slice(0, comments.length).every((l) => l.startsWith('# '))).toBe(true);
    const header = comments.join('\n');
    const lib = starterBandLibrary();
    expect(header).toContain(`# campaign: ${CAMPAIGN_NAME} (${campaign.id})`);
    expect(header).toContain(`# Starkiln catalogue, software version ${appVersion()}`);
    expect(header).toContain(`# band library version: ${lib.version}`);
    expect(header).toMatch(/# constants: CODATA 2018/);
    expect(header).toMatch(/# extinction law: f99, R_V = 3\.1/);
    expect(header).toMatch(/# options: .*fitAv = true/);
    expect(header).toMatch(/# fit batch \w+: .* extinction law ccm89, R_V = 3\.1/);
    // Every batch line carries all of its options, clip included, and points to the batch_id column.
    for (const l of comments.filter((c) => c.startsWith('# fit batch '))) expect(l).toMatch(/; options: .*clip = (true|false).*\(the batch_id column names each row's batch\)$/);
    expect(header).toMatch(/# selection: review status accepted; \d+ rows/);
    expect(header).toMatch(/# created: \d{4}-\d\d-\d\dT/);
    // The zero-points used, with their sources (Bessell V: Bessell, Castelli & Plez 1998, docs/science.md).
    expect(header).toContain(`# zero-point V (${lib.bands.V.system}, Vega): F_lambda,0 = ${lib.bands.V.zeroPoint!.fLambdaCgs} erg s-1 cm-2 A-1`);
    expect(header).toContain(`# zero-point Ks (${lib.bands.Ks.system}, Vega)`);
    for (const [code, words] of Object.entries(FLAG_EXPLANATIONS)) expect(header).toContain(`#   ${code}: ${words}`);

    const records = parseCsv(csv, { comment: '#', columns: true, skip_empty_lines: true }) as Record<string, string>[];
    const want = dbRows();
    expect(want.length).toBeGreaterThan(30);
    expect(Object.keys(records[0])).toEqual(exportColumns().map((c) => c.name));
    expect(records.map((r) => r.id)).toEqual(want.map((r) => r.id));
    for (let i = 0; i < want.length; i++) {
      for (const c of CATALOGUE_COLUMNS) {
        const expected = want[i][c.name];
        const got = records[i][c.name];
        if (expected === null || expected === undefined) {
          expect(got, `${want[i].id} ${c.name}`).toBe('');
        } else if (numberColumns.includes(c.name)) {
          const rel = c.digits ? 0.5 * 10 ** (1 - c.digits) : 0;
          expect(Math.abs(Number(got) - Number(expected)), `${want[i].id} ${c.name}`).toBeLessThanOrEqual(Math.abs(Number(expected)) * rel * 1.0000001);
        } else {
          expect(got, `${want[i].id} ${c.name}`).toBe(String(expected));
        }
      }
      expect(records[i].review_status).toBe('accepted');
    }
  });

  it('writes any filtered view, and calls unreviewed fits unreviewed', async () => {
    const { bytes } = await download('csv', { teffMinK: 5000, teffMaxK: 7000 });
    const records = parseCsv(text(bytes), { comment: '#', columns: true }) as Record<string, string>[];
    const want = dbRows('f.teff_k BETWEEN 5000 AND 7000');
    expect(records.map((r) => r.id)).toEqual(want.map((r) => r.id));
    expect(records.map((r) => r.review_status)).toEqual(want.map((r) => (r.review_status === 'pending' ? 'unreviewed' : r.review_status)));
    expect(new Set(records.map((r) => r.review_status)).size).toBeGreaterThan(1);
    expect(text(bytes)).toMatch(/# selection: any review status; Teff ≥ 5000 K; Teff ≤ 7000 K/);
  });
});

describe('JSON', () => {
  it('holds the provenance, the columns with units, and the rows at full precision', async () => {
    const doc = JSON.parse(text((await download('json')).bytes)) as { provenance: Record<string, any>; columns: { name: string; unit?: string }[]; rows: DbRow[] }; // eslint-disable-line @typescript-eslint/no-explicit-any
    expect(doc.provenance.campaign).toEqual(campaign);
    expect(doc.provenance.software).toEqual({ name: 'Starkiln', version: appVersion() });
    expect(doc.provenance.zeroPoints.map((z: { band: string }) => z.band)).toEqual(expect.arrayContaining(['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks']));
    expect(doc.columns.find((c) => c.name === 'teff_k')!.unit).toBe('K');
    const want = dbRows().map((r) => ({ ...r, bands_used: r.bands_used ?? '', n_bands: r.n_bands ?? 0 }));
    expect(doc.rows).toEqual(want);
  });
});

describe('VOTable', () => {
  it('parses as XML with a FIELD per column carrying unit and UCD, and TD values equal to the database', async () => {
    const xml = text((await download('votable')).bytes);
    const doc = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '', parseTagValue: false, isArray: (name) => ['TR', 'TD', 'FIELD', 'INFO', 'PARAM'].includes(name) }).parse(xml);
    expect(doc.VOTABLE.version).toBe('1.4');
    const table = doc.VOTABLE.RESOURCE.TABLE;
    const fields = table.FIELD as { name: string; unit?: string; ucd: string; datatype: string }[];
    expect(fields.map((f) => f.name)).toEqual(exportColumns().map((c) => c.name));
    expect(fields.find((f) => f.name === 'teff_k')).toMatchObject({ unit: 'K', ucd: 'phys.temperature.effective', datatype: 'double' });
    expect(fields.find((f) => f.name === 'radius_rsun')).toMatchObject({ unit: 'solRad', ucd: 'phys.size.radius' });
    expect(fields.find((f) => f.name === 'fbol_cgs')).toMatchObject({ unit: 'mW.m-2', ucd: 'phot.flux.bol' });
    const infos = doc.VOTABLE.RESOURCE.INFO as { name: string; value: string }[];
    expect(infos.find((i) => i.name === 'software')!.value).toBe(`Starkiln ${appVersion()}`);
    expect(infos.filter((i) => i.name === 'provenance').map((i) => i.value)).toEqual(expect.arrayContaining([expect.stringMatching(/^zero-point V /)]));
    const want = dbRows();
    expect(Number(table.nrows)).toBe(want.length);
    const trs = table.DATA.TABLEDATA.TR as { TD: string[] }[];
    expect(trs).toHaveLength(want.length);
    trs.forEach((tr, i) => {
      fields.forEach((f, j) => {
        const v = want[i][f.name];
        const cell = tr.TD[j];
        if (f.name === 'review_status') expect(cell).toBe('accepted');
        else if (v === null) expect(cell === '' || cell === undefined, `${want[i].id} ${f.name}`).toBe(true);
        else if (typeof v === 'number') expect(Number(cell), `${want[i].id} ${f.name}`).toBe(v);
        else expect(cell ?? '', `${want[i].id} ${f.name}`).toBe(v);
      });
    });
  });
});

describe('FITS', () => {
  it('is whole 2880-byte blocks, a primary HDU with provenance keywords and a BINTABLE our reader reads back exactly', async () => {
    const { bytes } = await download('fits');
    expect(bytes.length % FITS_BLOCK).toBe(0);
    const file = readFits(bytes, { source: 'catalogue.fits' });
    const primary = file.hdus[0].header;
    expect(primary.get('SOFTVER')).toBe(appVersion());
    expect(primary.get('BANDLIB')).toBe(starterBandLibrary().version);
    expect(primary.get('CAMPID')).toBe(campaign.id);
    expect(primary.commentary('COMMENT').join('\n')).toMatch(/constants: CODATA 2018/);
    expect(primary.commentary('HISTORY').join('\n')).toMatch(/law ccm89/);
    const table = readFitsTable(bytes, { source: 'catalogue.fits' });
    const want = dbRows();
    expect(table.rowCount).toBe(want.length);
    expect(table.column('teff_k')!.unit).toBe('K');
    expect(table.column('lum_lsun')!.unit).toBe('solLum');
    expect(table.column('fbol_cgs')!.unit).toBe('mW.m-2');
    const rows = table.rows();
    rows.forEach((r, i) => {
      for (const c of exportColumns()) {
        const v = want[i][c.name];
        if (c.name === 'review_status') expect(r[c.name]).toBe('accepted');
        else if (c.name === 'bands_used' || c.name === 'flags' || c.name === 'id') expect(r[c.name], `${want[i].id} ${c.name}`).toBe(v ?? '');
        else expect(r[c.name], `${want[i].id} ${c.name}`).toBe(v ?? (c.name === 'n_bands' ? 0 : null));
      }
    });
  });
});

const hasAstropy = spawnSync('/usr/bin/python3', ['-c', 'import astropy'], { encoding: 'utf8' }).status === 0;

describe.runIf(hasAstropy)('read by astropy (Debian python3-astropy), warnings as errors', () => {
  it('reads the VOTable, the FITS table and the ECSV (Table.read with no options) with the right units and values', async () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-exports-'));
    try {
      const vot = path.join(dir, 'catalogue.vot');
      const fitsPath = path.join(dir, 'catalogue.fits');
      const ecsvPath = path.join(dir, 'catalogue.ecsv');
      const votBytes = (await download('votable')).bytes;
      const fitsBytes = (await download('fits')).bytes;
      const ecsvBytes = (await download('ecsv')).bytes;
      writeFileSync(vot, votBytes);
      writeFileSync(fitsPath, fitsBytes);
      writeFileSync(ecsvPath, ecsvBytes);
      // F_bol's unit is spelled the same in every file: mW.m-2 (= erg s-1 cm-2, the same numbers).
      expect(text(votBytes)).toMatch(/<FIELD name="fbol_cgs"[^>]* unit="mW\.m-2"/);
      expect(text(ecsvBytes)).toMatch(/# - \{name: "fbol_cgs", unit: "mW\.m-2",/);
      expect(text(fitsBytes)).toMatch(/TUNIT\d+ *= 'mW\.m-2 *'/);
      expect(text((await download('csv')).bytes)).toContain('#   fbol_cgs [mW.m-2]:');
      const script = path.join(projectRoot(), 'scripts/references/read_exports.py');
      const run = spawnSync('/usr/bin/python3', [script, vot, fitsPath, ecsvPath], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
      expect(run.stderr, 'astropy printed warnings or errors').toBe('');
      expect(run.status).toBe(0);
      const out = JSON.parse(run.stdout) as {
        votable: { fbol_to_cgs: number; units: Record<string, string | null>; fields: Record<string, { ucd: string }>; values: Record<string, unknown[]>; nrows: number };
        fits: { fbol_to_cgs: number; units: Record<string, string | null>; tunits: Record<string, string | null>; header: Record<string, unknown>; values: Record<string, unknown[]>; nrows: number };
        ecsv: { fbol_to_cgs: number; units: Record<string, string | null>; descriptions: Record<string, string>; values: Record<string, unknown[]>; meta: string[]; provenance_rows: number; batches: { id: string; options: Record<string, unknown> }[]; nrows: number };
      };
      const want = dbRows();
      expect(out.votable.nrows).toBe(want.length);
      expect(out.fits.nrows).toBe(want.length);
      // Units as astropy understands them (VOUnit for the VOTable, the FITS standard's for FITS).
      expect(out.votable.units).toMatchObject({ ra: 'deg', teff_k: 'K', theta_mas: 'mas', radius_rsun: 'solRad', lum_lsun: 'solLum', av: 'mag' });
      // F_bol's unit converts to erg s-1 cm-2 with a factor of exactly 1 in both files (astropy.units).
      expect(out.votable.fbol_to_cgs).toBeCloseTo(1, 12);
      expect(out.fits.fbol_to_cgs).toBeCloseTo(1, 12);
      expect(out.votable.fields.id.ucd).toBe('meta.id;meta.main');
      expect(out.votable.fields.chi2_red.ucd).toBe('stat.fit.chi2');
      expect(out.fits.units).toMatchObject({ ra: 'deg', teff_k: 'K', theta_mas: 'mas', radius_rsun: 'solRad', lum_lsun: 'solLum', av: 'mag' });
      expect(out.fits.header).toMatchObject({ SOFTVER: appVersion(), CAMPID: campaign.id, NROWS: want.length });
      // The ECSV: units, descriptions and the provenance (every batch with all its options, clip included) as metadata.
      expect(out.ecsv.nrows).toBe(want.length);
      expect(out.ecsv.fbol_to_cgs).toBeCloseTo(1, 12);
      expect(out.ecsv.units).toMatchObject({ ra: 'deg', teff_k: 'K', theta_mas: 'mas', radius_rsun: 'solRad', lum_lsun: 'solLum', av: 'mag' });
      expect(out.ecsv.descriptions.teff_k).toBe(exportColumns().find((c) => c.name === 'teff_k')!.description);
      expect(out.ecsv.meta).toEqual(['comments', 'provenance']);
      expect(out.ecsv.provenance_rows).toBe(want.length);
      expect(out.ecsv.batches.length).toBeGreaterThan(0);
      for (const b of out.ecsv.batches) expect(Object.keys(b.options)).toEqual(expect.arrayContaining(['clip', 'law', 'rv', 'floorFraction', 'excludeBands']));
      for (const reader of [out.votable, out.fits, out.ecsv]) {
        for (const c of exportColumns()) {
          const got = reader.values[c.name];
          const expected = want.map((r) => (c.name === 'review_status' ? 'accepted' : c.name === 'n_bands' ? (r.n_bands ?? 0) : c.name === 'bands_used' ? (r.bands_used ?? '') : r[c.name]));
          // Empty strings come back from a VOTable as masked cells.
          expect(got.map((v) => (v === null && typeof expected[0] === 'string' ? '' : v)), c.name).toEqual(expected.map((v) => (v === null && typeof expected[0] === 'string' ? '' : v)));
        }
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('streaming', () => {
  it('reads one snapshot on its own connection while the app keeps writing', async () => {
    const want = dbRows();
    const chunks = exportChunks(t.db, campaign, { status: ['accepted'] }, 'json');
    const first = await chunks.next();
    expect(first.done).toBe(false);
    // The app's own connection is free (an open better-sqlite3 iterator would make it busy) and
    // its writes do not reach the download in progress.
    const pending = t.sqlite.prepare("SELECT id FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND ok = 1 AND review_status <> 'accepted'").pluck().all(campaign.id) as number[];
    expect(pending.length).toBeGreaterThan(0);
    t.sqlite.prepare(`UPDATE fit_results SET review_status = 'accepted' WHERE id IN (${pending.join(',')})`).run();
    let body = text(first.value as Uint8Array);
    for await (const c of chunks) body += text(c);
    expect((JSON.parse(body) as { rows: unknown[] }).rows).toHaveLength(want.length);
    expect(dbRows()).toHaveLength(want.length + pending.length);
    t.sqlite.prepare(`UPDATE fit_results SET review_status = 'pending' WHERE id IN (${pending.join(',')})`).run();
  });

  it('sends the FITS headers before reading rows, then rows in bounded chunks', async () => {
    const chunks = exportChunks(t.db, campaign, {}, 'fits');
    const head = (await chunks.next()).value as Uint8Array;
    // Two header units, nothing else: no row has been packed yet.
    expect(head.length % FITS_BLOCK).toBe(0);
    expect(text(head).match(/END {77}/g)).toHaveLength(2);
    const sizes: number[] = [];
    for await (const c of chunks) sizes.push(c.length);
    expect(Math.max(...sizes)).toBeLessThanOrEqual(64 * 1024);
    expect(sizes.reduce((a, b) => a + b, 0) % FITS_BLOCK).toBe(0);
  });
});

describe('download route', () => {
  async function call(actor: Actor | null, format: string, query = '?status=accepted') {
    const url = new URL(`http://127.0.0.1/api/campaigns/${campaign.id}/downloads/${format}${query}`);
    return downloadRoute({ locals: { app: t.app, actor }, params: { id: campaign.id, format }, request: new Request(url), url } as never);
  }

  it('streams every format to members with a file name, and refuses others', async () => {
    expect((await call(null, 'csv')).status).toBe(401);
    expect((await call(outsider, 'csv')).status).toBe(404);
    for (const format of EXPORT_FORMAT_NAMES) {
      const res = await call(collaborator, format);
      expect(res.status).toBe(200);
      expect(res.headers.get('content-disposition')).toMatch(new RegExp(`^attachment; filename="brackenfell-open-cluster-catalogue-\\d{4}-\\d\\d-\\d\\d\\.(csv|ecsv|vot|fits|json)"$`));
      expect(res.body).toBeInstanceOf(ReadableStream);
      expect((await res.arrayBuffer()).byteLength).toBeGreaterThan(1000);
    }
    const unknown = await call(collaborator, 'xlsx');
    expect(unknown.status).toBe(404);
    expect(((await unknown.json()) as { error: { message: string } }).error.message).toMatch(/csv, votable, fits, json/);
    expect((await call(collaborator, 'csv', '?teffMin=warm')).status).toBe(400);
  });

  it('applies the flag, flagAbsent, q and chi2Max parameters (rows compared with plain SQL)', async () => {
    const ids = async (query: string) => {
      const res = await call(collaborator, 'csv', query);
      expect(res.status, query).toBe(200);
      return (parseCsv(await res.text(), { comment: '#', columns: true }) as Record<string, string>[]).map((r) => r.id);
    };
    const hasFlag = (code: string) => `(' ' || f.flags || ' ') LIKE '% ${code} %'`;
    const accepted = "f.review_status = 'accepted'";
    const withFlag = dbRows(`${accepted} AND ${hasFlag('plx_missing')}`).map((r) => r.id);
    const withoutFlag = dbRows(`${accepted} AND NOT ${hasFlag('plx_missing')}`).map((r) => r.id);
    expect(withFlag.length).toBeGreaterThan(0);
    expect(withoutFlag.length).toBeGreaterThan(0);
    expect(await ids('?status=accepted&flag=plx_missing')).toEqual(withFlag);
    expect(await ids('?status=accepted&flag=plx_missing&flagAbsent=1')).toEqual(withoutFlag);

    const chi2 = dbRows(accepted).map((r) => Number(r.chi2_red)).filter(Number.isFinite).sort((a, b) => a - b);
    const cut = chi2[Math.floor(chi2.length / 2)];
    const belowCut = dbRows(`${accepted} AND f.chi2_red <= ${cut}`).map((r) => r.id);
    expect(belowCut.length).toBeGreaterThan(0);
    expect(belowCut.length).toBeLessThan(chi2.length);
    expect(await ids(`?status=accepted&chi2Max=${cut}`)).toEqual(belowCut);

    const prefix = String(dbRows(accepted)[0].id).slice(0, -1);
    const byPrefix = dbRows(`${accepted} AND substr(s.star_key, 1, ${prefix.length}) = '${prefix}'`).map((r) => r.id);
    expect(byPrefix.length).toBeGreaterThan(0);
    expect(byPrefix.length).toBeLessThan(dbRows(accepted).length);
    expect(await ids(`?status=accepted&q=${encodeURIComponent(prefix)}`)).toEqual(byPrefix);
    // The selection line of the file says which filter made it.
    const res = await call(collaborator, 'csv', `?status=accepted&flag=plx_missing&flagAbsent=1&chi2Max=${cut}&q=${encodeURIComponent(prefix)}`);
    expect(await res.text()).toContain(`# selection: review status accepted; reduced χ² ≤ ${cut}; without flag plx_missing; star id starting with "${prefix}"`);
  });
});

// OWASP Cheat Sheet "CSV Injection": a downloaded cell must not start with = + - @ tab or CR.
describe('CSV download and formula injection', () => {
  it('prefixes hostile text cells with a single quote and leaves numbers alone', async () => {
    const hostile = ['=HYPERLINK("http://evil.test","x")', '+1+1', '@SUM(1)', '-2+3', '\tcmd'];
    const rows = t.sqlite
      .prepare("SELECT s.id, s.star_key, s.dec_deg FROM stars s JOIN fit_results f ON f.star_id = s.id AND f.is_current = 1 WHERE s.campaign_id = ? AND f.review_status = 'accepted' ORDER BY s.id LIMIT ?")
      .all(campaign.id, hostile.length) as { id: number; star_key: string; dec_deg: number | null }[];
    expect(rows).toHaveLength(hostile.length);
    const rename = t.sqlite.prepare('UPDATE stars SET star_key = ?, dec_deg = ? WHERE id = ?');
    try {
      // South of the equator, so each row also carries a negative number.
      rows.forEach((r, i) => rename.run(hostile[i], -12.5 - i, r.id));
      const url = new URL(`http://127.0.0.1/api/campaigns/${campaign.id}/downloads/csv?status=accepted`);
      const res = await downloadRoute({ locals: { app: t.app, actor: collaborator }, params: { id: campaign.id, format: 'csv' }, request: new Request(url), url } as never);
      expect(res.status).toBe(200);
      const text = await res.text();
      const records = parseCsv(text, { comment: '#', columns: true, skip_empty_lines: true, relax_quotes: false }) as Record<string, string>[];
      for (const id of hostile) {
        const rec = records.find((r) => r.id === `'${id}`);
        expect(rec, `row for ${JSON.stringify(id)}`).toBeDefined();
        // The declination is a plain negative number, not neutralised.
        expect(Number(rec!.dec)).toBeLessThan(0);
        expect(rec!.dec.startsWith('-')).toBe(true);
      }
      for (const line of text.split('\n').filter((l) => l && !l.startsWith('#'))) {
        for (const cell of parseCsv(line)[0] as string[]) {
          if (/^[ ]*[=+@\t\r]/.test(cell)) throw new Error(`cell ${JSON.stringify(cell)} starts a formula`);
          if (cell.startsWith('-')) expect(Number.isFinite(Number(cell)), `text cell ${JSON.stringify(cell)}`).toBe(true);
        }
      }
    } finally {
      rows.forEach((r) => rename.run(r.star_key, r.dec_deg, r.id));
    }
  });
});
