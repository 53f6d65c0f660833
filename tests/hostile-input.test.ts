// Hostile and malformed files through the real intake routes (upload → check → import) on a real
// migrated SQLite, and through `starkiln fit`: the cases an attack test found (a 52 MB id, NUL, BiDi
// and zero-width characters in ids, 1e400, a semicolon file with decimal commas, invalid UTF-8 in a
// VOTable, hostile XML) and the reader limits set by INPUT_MAX_*. Nothing is ever half-written:
// a refused import leaves the campaign as it was. Star names are invented.
import { count, eq } from 'drizzle-orm';
import type { APIContext } from 'astro';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, afterEach, beforeEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { intakeJobs, measurements, stars, uploads } from '../src/db/schema';
import type { Actor } from '../src/server/context';
import { getUpload, type UploadDetail } from '../src/server/intake/intake';
import { drainIntakeJobs } from '../src/server/intake/run';
import { POST as postUpload } from '../src/pages/api/campaigns/[id]/uploads/index';
import { POST as postCheck } from '../src/pages/api/campaigns/[id]/uploads/[uploadId]/check';
import { POST as postImport } from '../src/pages/api/campaigns/[id]/uploads/[uploadId]/import';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;

function start(overrides: Record<string, string> = {}) {
  return async () => {
    t = createTestApp(overrides);
    analyst = await makeUser(t.app);
    campaignId = makeCampaign(t.app, analyst).id;
  };
}
afterEach(() => t.cleanup());

const ctx = (request: Request, params: Record<string, string> = {}) => ({ locals: { app: t.app, actor: analyst }, params: { id: campaignId, ...params }, request }) as unknown as APIContext;

// Reading, checking and importing are intake jobs (decision record 0023): each helper posts to the
// route, runs the queued job here with the app's reader limits, and answers as the finished job
// does: its refusal's status and body, or 201/200 with what it produced.
async function drain() {
  await drainIntakeJobs(t.db, { limits: t.app.env.inputLimits });
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any -- the answers' shapes differ per route
type Answer = { status: number; body: Record<string, any> };

function finished(jobId: string, ok: number): Answer {
  const j = t.db.select().from(intakeJobs).where(eq(intakeJobs.id, jobId)).get()!;
  const o = (j.outcome ?? {}) as Record<string, unknown>;
  if (j.status === 'failed') {
    const r = o.refusal as { status: number; error: unknown; report?: unknown; summary?: unknown };
    return { status: r.status, body: { error: r.error, report: r.report, summary: r.summary } };
  }
  return { status: ok, body: o };
}

async function upload(name: string, bytes: Uint8Array | string): Promise<{ status: number; body: { upload?: UploadDetail; error?: { code: string; message: string } } }> {
  const form = new FormData();
  form.append('file', new Blob([bytes as BlobPart]), name);
  const res = await postUpload(ctx(new Request('http://127.0.0.1/upload', { method: 'POST', body: form })));
  const body = (await res.json()) as { upload?: UploadDetail; error?: { code: string; message: string } };
  if (res.status !== 201) return { status: res.status, body };
  await drain();
  const read = finished(body.upload!.job!.id, 201);
  if (read.status !== 201) return { status: read.status, body: { error: read.body.error } };
  return { status: 201, body: { upload: getUpload(t.db, campaignId, body.upload!.id) } };
}

async function post(route: typeof postCheck, uploadId: string, body: unknown): Promise<Answer> {
  const res = await route(ctx(new Request('http://x/', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) }), { uploadId }));
  const answer = (await res.json()) as Answer['body'];
  if (res.status !== 202) return { status: res.status, body: answer };
  await drain();
  return finished(answer.job.id, 200);
}

const mappingOf = (u: UploadDetail) => ({ mapping: { layout: u.detected!.layout, columns: u.detected!.columns }, rules: u.detected!.rules });

function counts() {
  return { stars: t.db.select({ n: count() }).from(stars).get()!.n, measurements: t.db.select({ n: count() }).from(measurements).get()!.n };
}

describe('star ids and numbers through upload → check → import', () => {
  beforeEach(start());

  it('a 52 MB id: checked with row, file line and column; the import is refused whole and nothing is written', async () => {
    const huge = 'ember-'.repeat(Math.ceil((52 * 1024 * 1024) / 6));
    const up = await upload('huge-id.csv', `id,V,V_err\nember-1,9.5,0.02\n${huge},9.6,0.02\n`);
    expect(up.status).toBe(201);
    const u = up.body.upload!;
    const check = await post(postCheck, u.id, mappingOf(u));
    expect(check.status).toBe(200);
    expect(check.body.check.report).toEqual([
      { file: 'huge-id.csv', row: 2, line: 3, column: 'id', columnNumber: 1, severity: 'error', message: expect.stringMatching(/^row 2 \(file line 3\), column id: star id "(ember-){6}embe… \(\d+ characters\)" is longer than 128 characters; the row was left out$/) },
    ]);
    const imp = await post(postImport, u.id, mappingOf(u));
    expect(imp.status).toBe(422);
    expect(imp.body.error.message).toMatch(/^huge-id\.csv has 1 problem; nothing was imported/);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });

  it('BiDi and zero-width characters in ids: named by code point; nothing imported', async () => {
    const up = await upload('bidi.csv', 'id,V,V_err\nember-1,9.5,0.02\nember-\u202e2,9.6,0.02\nember\u200b3,9.7,0.02\n\u2066ember-4\u2069,9.8,0.02\n');
    const u = up.body.upload!;
    const imp = await post(postImport, u.id, mappingOf(u));
    expect(imp.status).toBe(422);
    expect(imp.body.report.map((r: { row: number; line: number; column: string; message: string }) => [r.row, r.line, r.column, /U\+[0-9A-F]{4} [A-Z-]+( [A-Z-]+)*/.exec(r.message)![0]])).toEqual([
      [2, 3, 'id', 'U+202E RIGHT-TO-LEFT OVERRIDE'],
      [3, 4, 'id', 'U+200B ZERO WIDTH SPACE'],
      [4, 5, 'id', 'U+2066 LEFT-TO-RIGHT ISOLATE'],
    ]);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });

  it('a NUL byte inside an id: the upload is refused naming row, file line and column', async () => {
    const up = await upload('nul.csv', 'id,V,V_err\nember-1,9.5,0.02\nember\u0000-2,9.6,0.02\n');
    expect(up.status).toBe(422);
    expect(up.body.error).toEqual({ code: 'unreadable_file', message: 'nul.csv, row 2 (file line 3), column id: the cell "ember<U+0000>-2" holds a NUL byte (U+0000), which text never holds; nothing was read' });
    expect(t.db.select({ s: uploads.status }).from(uploads).get()!.s).toBe('rejected');
  });

  it('1e400 and ±1e308 magnitudes: refused with row and column, nothing imported', async () => {
    const up = await upload('big.csv', 'id,V,V_err\nember-1,1e400,0.02\nember-2,1e308,0.02\nember-3,-1e308,0.02\n');
    const imp = await post(postImport, up.body.upload!.id, mappingOf(up.body.upload!));
    expect(imp.status).toBe(422);
    expect(imp.body.report.map((r: { row: number; column: string }) => [r.row, r.column])).toEqual([[1, 'V'], [2, 'V'], [3, 'V']]);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });

  it('a semicolon-separated file with decimal commas is imported with its values', async () => {
    const up = await upload('europe.csv', 'id;V;V_err;Ks;Ks_err\nember-1;9,52;0,02;7,1;0,03\nember-2;10,05;0,03;8,0;0,04\n');
    expect(up.status).toBe(201);
    const imp = await post(postImport, up.body.upload!.id, mappingOf(up.body.upload!));
    expect(imp.status).toBe(200);
    expect(imp.body.import).toMatchObject({ starsCreated: 2, measurementsCreated: 4, errorCount: 0 });
    const v = t.db.select({ mag: measurements.mag, band: measurements.bandKey }).from(measurements).all();
    expect(v).toEqual(expect.arrayContaining([{ mag: 9.52, band: 'V' }, { mag: 10.05, band: 'V' }, { mag: 7.1, band: 'Ks' }, { mag: 8, band: 'Ks' }]));
  });

  it('a FITS image imported with a BiDi star id is refused by the same rule', async () => {
    const { readFileSync } = await import('node:fs');
    const up = await upload('frame.fits', new Uint8Array(readFileSync(path.join(projectRoot(), 'fixtures/fits/image_header.fits'))));
    const imp = await post(postImport, up.body.upload!.id, { rules: { quality: [] }, image: { starId: 'ember\u202e-9', band: 'V', mag: 10.5, magErr: 0.03 } });
    expect(imp.status).toBe(400);
    expect(JSON.stringify(imp.body)).toMatch(/U\+202E RIGHT-TO-LEFT OVERRIDE/);
    const far = await post(postImport, up.body.upload!.id, { rules: { quality: [] }, image: { starId: 'ember-9', band: 'V', mag: 1e308, magErr: 0.03 } });
    expect(far.status).toBe(400);
    expect(JSON.stringify(far.body)).toMatch(/The magnitude must be within -30…50/);
    expect(counts()).toEqual({ stars: 0, measurements: 0 });
  });
});

const vot = (rows: string, head = '<?xml version="1.0"?>\n') =>
  `${head}<VOTABLE version="1.4"><RESOURCE><TABLE>\n<FIELD name="id" datatype="char" arraysize="*"/><FIELD name="V" datatype="double"/><FIELD name="V_err" datatype="double"/>\n<DATA><TABLEDATA>\n${rows}</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>\n`;

describe('hostile XML and invalid UTF-8 through the upload route: 400 or 422 naming the problem, never 500', () => {
  beforeEach(start());

  const laughs = `<!DOCTYPE lolz [<!ENTITY lol "lol">${Array.from({ length: 9 }, (_, i) => `<!ENTITY lol${i + 1} "${`&lol${i || ''};`.repeat(10)}">`).join('')}]>\n`;
  for (const [name, text, message] of [
    ['laughs.vot', vot('<TR><TD>&lol9;</TD><TD>1</TD><TD>0.1</TD></TR>\n', `<?xml version="1.0"?>\n${laughs}`), /^laughs\.vot: line 2, column 1: the file declares a document type/],
    ['external.vot', vot('<TR><TD>&x;</TD><TD>1</TD><TD>0.1</TD></TR>\n', '<?xml version="1.0"?>\n<!DOCTYPE v [<!ENTITY x SYSTEM "file:///etc/passwd">]>\n'), /^external\.vot: line 2, column 1: the file declares a document type/],
    ['deep.vot', `<?xml version="1.0"?>\n<VOTABLE>${'<RESOURCE>'.repeat(150)}${'</RESOURCE>'.repeat(150)}</VOTABLE>`, /^deep\.vot: line 2, column \d+: elements nested more than 64 deep/],
    ['attr.vot', vot('').replace('<TABLE>', `<TABLE name="${'n'.repeat(1_000_000)}">`), /^attr\.vot: line 2, column \d+: an attribute value of 1000000 characters \(name of <TABLE>\)/],
  ] as const) {
    it(`${name}: 400 unsafe_file with line and column`, async () => {
      const up = await upload(name, text);
      expect(up.status).toBe(400);
      expect(up.body.error!.code).toBe('unsafe_file');
      expect(up.body.error!.message).toMatch(message);
      // Kept as a rejected upload with its report; its check answers 409, not 500.
      const id = t.db.select({ id: uploads.id }).from(uploads).get()!.id;
      const check = await post(postCheck, id, { mapping: { layout: 'wide', columns: {} }, rules: { quality: [] } });
      expect(check.status).toBe(409);
    });
  }

  it('invalid UTF-8 in a VOTable: 422 naming the byte offset and line', async () => {
    const text = vot('<TR><TD>ember-1</TD><TD>9.5</TD><TD>0.02</TD></TR>\n');
    const bytes = new TextEncoder().encode(text);
    const at = text.indexOf('ember-1');
    bytes[at + 5] = 0xc3; // a lead byte followed by '1', not a continuation byte
    const up = await upload('bad-utf8.vot', bytes);
    expect(up.status).toBe(422);
    expect(up.body.error!.message).toBe(`bad-utf8.vot: invalid UTF-8 at byte offset ${at + 5} (line 5; bytes 0xC3 0x31 0x3C 0x2F); a VOTable without an encoding declaration must be UTF-8: save it as UTF-8`);
  });
});

describe('reader limits set by INPUT_MAX_*', () => {
  beforeEach(start({ INPUT_MAX_ROWS: '3' }));

  it('an upload past a limit: 422 input_limit naming file, line and setting; at the limit it is read', async () => {
    const rows = (n: number) => 'id,V,V_err\n' + Array.from({ length: n }, (_, i) => `ember-${i + 1},9.5,0.02\n`).join('');
    const over = await upload('many.csv', rows(4));
    expect(over.status).toBe(422);
    expect(over.body.error).toEqual({ code: 'input_limit', message: 'many.csv, line 5: more than 3 data rows; split the file; the limit is INPUT_MAX_ROWS = 3' });
    const ok = await upload('three.csv', rows(3));
    expect(ok.status).toBe(201);
    // A limit lowered after the upload: its check answers 422 with the limit, not 500.
    t.app.env.inputLimits.maxRows = 2;
    const check = await post(postCheck, ok.body.upload!.id, mappingOf(ok.body.upload!));
    expect(check.status).toBe(422);
    expect(check.body.error.message).toMatch(/^three\.csv, line 4: more than 2 data rows/);
  });

  it('a bad setting stops the configuration with its name', () => {
    expect(() => createTestApp({ INPUT_MAX_CELLS: 'lots' })).toThrow(/INPUT_MAX_CELLS: must be a positive whole number, found "lots"/);
  });
});

describe('starkiln fit on hostile files and past the limits: exit 1 with the message', () => {
  const dir = mkdtempSync(path.join(tmpdir(), 'starkiln-hostile-input-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  beforeEach(start());
  const bin = path.join(projectRoot(), 'bin/starkiln.mjs');
  const run = (file: string, env: Record<string, string> = {}) =>
    // The timeout only stops a regression from hanging the suite; the answer comes in a few seconds.
    spawnSync(process.execPath, [bin, 'fit', file, '-o', 'out.csv'], { cwd: dir, encoding: 'utf8', timeout: 120_000, env: { ...process.env, ...env } });

  it('more rows than INPUT_MAX_ROWS', () => {
    writeFileSync(path.join(dir, 'rows.csv'), 'id,V,V_err\n' + 'ember-1,9.5,0.02\n'.repeat(10));
    const r = run('rows.csv', { INPUT_MAX_ROWS: '5' });
    expect(r.signal).toBeNull();
    expect(r.status).toBe(1);
    expect(r.stderr).toBe('starkiln: rows.csv, line 7: more than 5 data rows; split the file; the limit is INPUT_MAX_ROWS = 5\n');
  });

  it('a file larger than INPUT_MAX_BYTES is refused before it is read', () => {
    writeFileSync(path.join(dir, 'size.csv'), 'id,V,V_err\n' + 'ember-1,9.5,0.02\n'.repeat(10));
    const r = run('size.csv', { INPUT_MAX_BYTES: '100' });
    expect(r.status).toBe(1);
    expect(r.stderr).toBe('starkiln: size.csv: the file has 181 bytes, more than the 100 a file may have; the limit is INPUT_MAX_BYTES = 100\n');
  });

  it('a VOTable with a DTD', () => {
    writeFileSync(path.join(dir, 'dtd.vot'), vot('', '<?xml version="1.0"?>\n<!DOCTYPE v [<!ENTITY x "y">]>\n'));
    const r = run('dtd.vot');
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/^starkiln: dtd\.vot: line 2, column 1: the file declares a document type/);
  });

  it('a bad limit setting: exit 2 naming it', () => {
    const r = run('rows.csv', { INPUT_MAX_SECONDS: 'soon' });
    expect(r.status).toBe(2);
    expect(r.stderr).toBe('starkiln: INPUT_MAX_SECONDS must be a positive number of seconds, found "soon"\n');
  });
});
