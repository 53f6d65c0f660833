// FITS files whose headers declare more than their bytes hold. Before: the reader looped to
// "JavaScript heap out of memory" (NAXIS2 = 3e9 rows of zero bytes; TDIM with an axis of 0) and
// `starkiln fit` hung on them. Now: a FitsError naming the keyword, the intake's UnreadableFile,
// and the command exits 1 with the message.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { FitsError, readFits, readFitsTable } from '../src/core/tables/fits';
import { readUpload, UnreadableFile } from '../src/core/tables/table-file';
import { bintableHeader, card, data, header, primary, smallTable, zeroAxisTdim, zeroWidthRows } from './support/hostile-fits';

function fitsError(bytes: Buffer, read: (b: Uint8Array) => unknown = (b) => readFits(b, { source: 'hostile.fits' })): FitsError {
  try {
    read(new Uint8Array(bytes));
  } catch (err) {
    expect(err).toBeInstanceOf(FitsError);
    return err as FitsError;
  }
  throw new Error('expected a FitsError');
}

function unreadable(bytes: Buffer, file = 'hostile.fits'): UnreadableFile {
  try {
    readUpload(new Uint8Array(bytes), file);
  } catch (err) {
    expect(err).toBeInstanceOf(UnreadableFile);
    return err as UnreadableFile;
  }
  throw new Error('expected an UnreadableFile');
}

describe('declared sizes the file cannot hold', () => {
  it('NAXIS1 = 0, NAXIS2 = 3 000 000 000, TFIELDS = 0 in 5 760 bytes: refused by keyword, not looped over', () => {
    const bytes = zeroWidthRows(3_000_000_000);
    expect(bytes.length).toBe(5760);
    const err = fitsError(bytes);
    expect(err.keyword).toBe('NAXIS2');
    expect(err.hdu).toBe(1);
    expect(err.message).toMatch(/^hostile\.fits: HDU 1 header card 5: NAXIS2 = 3000000000 rows of NAXIS1 = 0 bytes: rows that hold no bytes cannot be read/);
    expect(unreadable(bytes).message).toMatch(/^hostile\.fits: not a readable FITS file: HDU 1 header card 5: NAXIS2 = 3000000000/);
  });

  it('the same with NAXIS2 = 2e7 is not taken for a 20-million-row table', () => {
    expect(fitsError(zeroWidthRows(20_000_000)).keyword).toBe('NAXIS2');
  });

  it('an empty table (NAXIS2 = 0, no columns) is still read', () => {
    const t = readFitsTable(new Uint8Array(zeroWidthRows(0)));
    expect(t.rowCount).toBe(0);
    expect(t.columns).toEqual([]);
  });

  it('rows of one byte are bounded by the bytes present: NAXIS2 = 3e9 with 1-byte rows is a truncated file', () => {
    const bytes = Buffer.concat([primary(), bintableHeader(1, 3_000_000_000, [[card('TTYPE1', 'q'), card('TFORM1', 'B')]])]);
    expect(fitsError(bytes).message).toMatch(/truncated file: HDU 1 declares 3000000000 bytes of data/);
  });

  it("TFORM2 = '5E' with TDIM2 = '(0,5)': refused naming TDIM2 (reshape never advanced)", () => {
    const err = fitsError(zeroAxisTdim('(0,5)'));
    expect(err.keyword).toBe('TDIM2');
    expect(err.column).toBe('V');
    expect(err.message).toMatch(/column 2 \(V\) has TDIM2 = '\(0,5\)': every axis must be at least 1/);
    expect(unreadable(zeroAxisTdim('(0,5)')).message).toMatch(/TDIM2/);
  });

  it('a TDIM holding more elements than the repeat count, or not of the form (l,m), is refused', () => {
    expect(fitsError(zeroAxisTdim('(3,5)')).message).toMatch(/the axes hold 15 elements but TFORM2 gives 5/);
    expect(fitsError(zeroAxisTdim('(5,x)')).message).toMatch(/not of the form/);
  });

  it('a valid TDIM still shapes the cells', () => {
    const t = readFitsTable(new Uint8Array(zeroAxisTdim('(5,1)')));
    expect(t.getColumn('V')[0]).toEqual([[9, 9.100000381469727, 9.199999809265137, 9.300000190734863, 9.399999618530273]]);
  });

  it('THEAP before the end of the rows or past the data is refused naming THEAP', () => {
    const base = smallTable(3);
    const withTheap = Buffer.concat([primary(), bintableHeader(16, 3, [[card('TTYPE1', 'id'), card('TFORM1', '8A')], [card('TTYPE2', 'V'), card('TFORM2', 'D')]], [card('THEAP', 4)]), base.subarray(5760)]);
    expect(fitsError(withTheap).keyword).toBe('THEAP');
  });

  it('variable-length descriptors all pointing at one large heap run out of work, not memory', () => {
    // 2 000 rows, each a 1PB descriptor for the same 20 000-byte heap: 40 million element reads
    // from 36 000 bytes of data.
    const rows = 2000;
    const heap = 20_000;
    const main = Buffer.alloc(rows * 8);
    for (let r = 0; r < rows; r++) {
      main.writeInt32BE(heap, r * 8);
      main.writeInt32BE(0, r * 8 + 4);
    }
    const bytes = Buffer.concat([
      primary(),
      header([
        card('XTENSION', 'BINTABLE'),
        card('BITPIX', 8),
        card('NAXIS', 2),
        card('NAXIS1', 8),
        card('NAXIS2', rows),
        card('PCOUNT', heap),
        card('GCOUNT', 1),
        card('TFIELDS', 1),
        card('TTYPE1', 'spectrum'),
        card('TFORM1', '1PB(20000)'),
      ]),
      data(Buffer.concat([main, Buffer.alloc(heap)])),
    ]);
    const t = readFitsTable(new Uint8Array(bytes));
    const err = fitsError(bytes, () => t.getColumn('spectrum'));
    expect(err.message).toMatch(/decoding needs more than \d+ element reads/);
  });
});

describe('cut files', () => {
  it('a BINTABLE cut inside its header is reported as truncated, not taken for an image', () => {
    const whole = smallTable(3);
    // Primary with OBJECT and FILTER, so the old reading took the rest for a header-only image.
    const prim = Buffer.from(primary().toString('latin1').replace(card('EXTEND', true), card('EXTEND', true) + card('OBJECT', 'ember-01') + card('FILTER', 'V')).slice(0, 2880), 'latin1');
    const cut = Buffer.concat([prim, whole.subarray(2880, 2880 + 1000)]);
    const err = fitsError(cut);
    expect(err.message).toMatch(/truncated file: HDU 1 \(an extension starting at byte 2880\) is cut off inside its header, 1000 of at least 2880 bytes present/);
    expect(unreadable(cut).message).toMatch(/truncated/);
  });

  it('a BINTABLE whose data is cut is a truncated table, not an image', () => {
    const whole = smallTable(200);
    const prim = Buffer.from(primary().toString('latin1').replace(card('EXTEND', true), card('EXTEND', true) + card('OBJECT', 'ember-01')).slice(0, 2880), 'latin1');
    const cut = Buffer.concat([prim, whole.subarray(2880, 5760 + 1000)]);
    expect(unreadable(cut).message).toMatch(/not a readable FITS file: truncated file: HDU 1 declares 3200 bytes/);
  });
});

describe('starkiln fit on the hostile files', () => {
  const dir = mkdtempSync(path.join(tmpdir(), 'starkiln-hostile-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const bin = path.join(projectRoot(), 'bin/starkiln.mjs');

  for (const [name, bytes, message] of [
    ['rows.fits', zeroWidthRows(3_000_000_000), /NAXIS2 = 3000000000 rows of NAXIS1 = 0 bytes/],
    ['tdim.fits', zeroAxisTdim('(0,5)'), /TDIM2 = '\(0,5\)': every axis must be at least 1/],
  ] as const) {
    it(`${name}: exits 1 with the reader's message`, () => {
      writeFileSync(path.join(dir, name), bytes);
      // The timeout only stops a regression from hanging the suite; the answer comes in about a second.
      const r = spawnSync(process.execPath, [bin, 'fit', name, '-o', 'out.csv'], { cwd: dir, encoding: 'utf8', timeout: 120_000 });
      expect(r.signal).toBeNull();
      expect(r.status).toBe(1);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).toMatch(new RegExp(`^starkiln: ${name.replace('.', '\\.')}: `));
    });
  }
});

// Kept next to the builder's users so a reader can see the bytes are plain FITS.
it('the builder writes a table our reader and the standard agree on', () => {
  const t = readFitsTable(new Uint8Array(smallTable(3)));
  expect(t.getColumn('id')).toEqual(['ember-01', 'ember-02', 'ember-03']);
  expect(data(Buffer.alloc(1)).length).toBe(2880);
});
