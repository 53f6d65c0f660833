// The intake job streams text files (DelimitedStream), so the checks readUpload makes on a whole
// file must hold when the problem lies far from the start, past the first 64 kB that are sniffed
// on arrival: invalid UTF-8 (byte offset and line), a NUL in a cell (row, file line, column),
// decimal commas mixed with decimal points in a semicolon file, a "sep=;" line, and the row limit.
// Real migrated SQLite, the upload stored on disk, the job run inline. Star names are invented.
import { eq } from 'drizzle-orm';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { intakeJobs, measurements } from '../src/db/schema';
import type { Actor } from '../src/server/context';
import { checkUpload, createUpload, getUpload, importUpload, type CheckSummary } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { readUpload, UnreadableFile } from '../src/core/input/table-file';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
});
afterEach(() => t.cleanup());

/** Rows enough to pass the first 64 kB (about 90 kB), then `tail`. */
function longFile(sep: string, tail: string, decimal = '.'): Uint8Array {
  const rows = Array.from({ length: 4000 }, (_, i) => `ember-${i + 1}${sep}9${decimal}5${sep}0${decimal}02`).join('\n');
  return new TextEncoder().encode(`id${sep}V${sep}V_err\n${rows}\n${tail}`);
}

/** The read job's refusal message (or null when it read the file), through the real upload path. */
async function readOutcome(name: string, bytes: Uint8Array, limits?: Record<string, number>) {
  const form = new FormData();
  form.append('file', new Blob([bytes as BlobPart]), name);
  const u = await createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), { dataDir: path.dirname(t.filePath), maxBytes: 5 * 1024 * 1024 });
  await drainIntakeJobs(t.db, { limits });
  const j = t.db.select().from(intakeJobs).where(eq(intakeJobs.id, u.job!.id)).get()!;
  const refusal = (j.outcome as { refusal?: { status: number; error: { code: string; message: string } } }).refusal;
  return { id: u.id, refusal: j.status === 'failed' ? refusal! : null };
}

/** What readUpload says of the same bytes read whole (the reference the stream must match). */
function wholeMessage(name: string, bytes: Uint8Array, limits?: Record<string, number>): string {
  try {
    readUpload(bytes, name, undefined, { limits });
  } catch (err) {
    if (err instanceof UnreadableFile) return err.message;
    throw err;
  }
  return 'read';
}

describe('checks of a streamed text file, far from its start', () => {
  it('invalid UTF-8 at byte 90 000-odd: refused with the byte offset and line readUpload names', async () => {
    const good = longFile(',', 'ember-x,9.5,0.02\n');
    const bytes = new Uint8Array(good.length);
    bytes.set(good);
    const at = good.length - 12;
    bytes[at] = 0xe9; // Latin-1 é
    const r = await readOutcome('latin.csv', bytes);
    expect(r.refusal).toMatchObject({ status: 422, error: { code: 'unreadable_file' } });
    expect(r.refusal!.error.message).toMatch(new RegExp(`^latin\\.csv: invalid UTF-8 at byte offset ${at} \\(line 4002; bytes 0xE9 `));
    expect(r.refusal!.error.message).toBe(wholeMessage('latin.csv', bytes));
  });

  it('a NUL in a cell on line 4002: row, file line and column named', async () => {
    const bytes = longFile(',', 'ember\u0000-x,9.5,0.02\n');
    const r = await readOutcome('nul.csv', bytes);
    expect(r.refusal!.error.message).toBe('nul.csv, row 4001 (file line 4002), column id: the cell "ember<U+0000>-x" holds a NUL byte (U+0000), which text never holds; nothing was read');
    expect(r.refusal!.error.message).toBe(wholeMessage('nul.csv', bytes));
  });

  it('a decimal point among decimal commas in a semicolon file: refused naming a cell of each', async () => {
    const bytes = longFile(';', 'ember-x;9.5;0,02\n', ',');
    const r = await readOutcome('mixed.csv', bytes);
    expect(r.refusal!.error.message).toMatch(/^mixed\.csv: semicolon-separated with both decimal commas \(row 1 \(file line 2\), column V: "9,5"\) and decimal points \(row 4001 \(file line 4002\), column V: "9\.5"\)/);
    expect(r.refusal!.error.message).toBe(wholeMessage('mixed.csv', bytes));
  });

  it('decimal commas with a "sep=;" line: imported as numbers', async () => {
    const bytes = new TextEncoder().encode('sep=;\nid;V;V_err\nember-1;9,52;0,02\nember-2;10,05;0,03\n');
    const r = await readOutcome('sep.csv', bytes);
    expect(r.refusal).toBeNull();
    const u = getUpload(t.db, campaignId, r.id);
    expect(u.columns).toEqual(['id', 'V', 'V_err']);
    importUpload(t.app, analyst, campaignId, r.id, { mapping: { layout: u.detected!.layout, columns: u.detected!.columns }, rules: u.detected!.rules });
    await drainIntakeJobs(t.db);
    expect(t.db.select({ mag: measurements.mag }).from(measurements).all().map((m) => m.mag).sort()).toEqual([10.05, 9.52]);
  });

  it('past INPUT_MAX_ROWS: 422 input_limit with the line, as readUpload says', async () => {
    const bytes = longFile(',', '');
    const r = await readOutcome('rows.csv', bytes, { maxRows: 3000 });
    expect(r.refusal).toMatchObject({ status: 422, error: { code: 'input_limit', message: 'rows.csv, line 3002: more than 3000 data rows; split the file; the limit is INPUT_MAX_ROWS = 3000' } });
    expect(r.refusal!.error.message).toBe(wholeMessage('rows.csv', bytes, { maxRows: 3000 }));
  });

  it.each([
    ['letter.txt', 'Dear team,\nplease find attached the photometry we discussed last week.\nThe numbers follow in a separate file.\nBest wishes\n', /^letter\.txt: only 0 of the first 3 lines under the first line \(line 1\) have its 2 fields: this looks like a text document, not a table/],
    ['log.txt', 'Observing log\n\nThe night was clear, seeing 1.2 arcsec, humidity 40%, 12 fields observed.\nNo problems with the dome.\n', /^log\.txt: the first line \(line 1\) has no comma, tab or semicolon, so the file would be a single column of text/],
  ])('a prose text file (%s) is refused with the reason, not read as a table of one row', async (name, text, reason) => {
    const bytes = new TextEncoder().encode(text);
    const r = await readOutcome(name, bytes);
    expect(r.refusal).toMatchObject({ status: 422, error: { code: 'unreadable_file' } });
    expect(r.refusal!.error.message).toMatch(reason);
    expect(r.refusal!.error.message).toBe(wholeMessage(name, bytes));
  });

  it('a table with a few ragged rows is still a table: they are reported by row (control)', async () => {
    const bytes = new TextEncoder().encode('id,V,V_err\nember-1,9.5,0.02\nember-2,9.6\nember-3,9.7,0.02\n');
    const r = await readOutcome('ragged.csv', bytes);
    expect(r.refusal).toBeNull();
    const u = getUpload(t.db, campaignId, r.id);
    const job = checkUpload(t.app, analyst, campaignId, r.id, { mapping: { layout: u.detected!.layout, columns: u.detected!.columns }, rules: u.detected!.rules });
    await drainIntakeJobs(t.db);
    const check = outcomeOf(t.db, job.id).check as CheckSummary;
    expect(check.report.map((p) => [p.row, p.line])).toEqual([[2, 3]]);
    expect(check.starCount).toBe(2);
  });
});
