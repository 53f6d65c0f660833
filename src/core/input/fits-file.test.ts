// Our FITS reader against astropy (Debian python3-astropy 5.2), an independent implementation:
// the fixture files were written by astropy and *.astropy.json holds astropy's own reading of them
// (scripts/references/make_fits_fixtures.py). Malformed inputs are derived from those files here.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { FitsError, readFits, readFitsImageHeader, readFitsTable, type FitsCell, type FitsValue } from './fits-file.ts';

const root = fileURLToPath(new URL('../../..', import.meta.url));
const fixtures = path.join(root, 'fixtures/fits');
const benchmark = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');

type Json = null | boolean | number | string | Json[] | { int: string } | { [k: string]: Json };
interface AstropyHdu {
  index: number;
  type: string;
  name: string;
  header: [string, Json][];
  rowCount?: number;
  columns?: Record<string, Json[]>;
  shape?: number[];
}
interface AstropyDump {
  hdus: AstropyHdu[];
}

const load = (name: string) => new Uint8Array(readFileSync(path.join(fixtures, name)));
const astropy = (name: string): AstropyDump => JSON.parse(readFileSync(path.join(fixtures, name), 'utf8'));

/** Our values in the JSON shape the fixture script writes (bigint beyond 2^53 → {int}, complex → [re, im]). */
function asJson(v: FitsCell | FitsValue | undefined): Json {
  if (v === undefined || v === null) return null;
  if (typeof v === 'bigint') return v >= -(2n ** 53n) && v <= 2n ** 53n ? Number(v) : { int: v.toString() };
  if (Array.isArray(v)) return v.map(asJson);
  if (typeof v === 'object') return [v.re, v.im];
  return v;
}

function headerAsJson(cards: readonly { keyword: string; value?: FitsValue; comment?: string }[]): [string, Json][] {
  return cards.map((c) => [c.keyword, c.value === undefined ? (c.comment ?? '') : asJson(c.value)]);
}

function patchCard(bytes: Uint8Array, keywordStart: string, replacement: string, from = 0): Uint8Array {
  const out = bytes.slice();
  const text = Buffer.from(out).toString('latin1');
  let at = text.indexOf(keywordStart, from);
  while (at >= 0 && at % 80 !== 0) at = text.indexOf(keywordStart, at + 1);
  if (at < 0) throw new Error(`card ${keywordStart} not found`);
  out.set(Buffer.from(replacement.padEnd(80, ' ').slice(0, 80), 'latin1'), at);
  return out;
}

describe('FITS headers and binary tables compared with astropy', () => {
  for (const name of ['all_types', 'scaled', 'multi_hdu', 'image_header']) {
    it(`${name}.fits: every HDU's header cards and every table cell match astropy`, () => {
      const file = readFits(load(`${name}.fits`), { source: `${name}.fits` });
      const expected = astropy(`${name}.astropy.json`);
      expect(file.warnings).toEqual([]);
      expect(file.hdus.length).toBe(expected.hdus.length);
      for (const e of expected.hdus) {
        const hdu = file.hdus[e.index];
        expect(hdu.header.cards.length, `HDU ${e.index} card count`).toBe(e.header.length);
        expect(headerAsJson(hdu.header.cards)).toEqual(e.header);
        const kind = { PrimaryHDU: 'primary', ImageHDU: 'image', BinTableHDU: 'bintable', TableHDU: 'table' }[e.type];
        expect(hdu.kind).toBe(kind);
        if (e.columns) {
          expect(hdu.table!.rowCount).toBe(e.rowCount);
          for (const [col, values] of Object.entries(e.columns)) {
            const ours = hdu.table!.getColumn(col).map(asJson);
            if (name === 'scaled' && col === 'nscaled') {
              // Deviation on purpose: FITS Standard 4.0 section 7.3.2 says TNULL is the *stored* value that
              // means undefined, scaled or not; astropy 5.2 drops the null once TSCAL makes the column float.
              expect(values[1]).toBe(99.5);
              expect(ours).toEqual([values[0], null, values[2], values[3]]);
              continue;
            }
            expect(ours, `column ${col}`).toEqual(values);
          }
        }
      }
    });
  }

  it('skips image, cube and ASCII-table data by BITPIX, NAXISn, PCOUNT and GCOUNT and finds both binary tables', () => {
    const bytes = load('multi_hdu.fits');
    const file = readFits(bytes);
    expect(file.hdus.map((h) => [h.kind, h.name])).toEqual([
      ['primary', 'PRIMARY'],
      ['image', 'CUBE'],
      ['table', 'ASCII'],
      ['bintable', 'PHOT'],
      ['bintable', 'ZEROPTS'],
    ]);
    // Primary 5×7 int16 = 70 bytes; cube 2×3×5 float32 = 120 bytes (astropy's shapes in the JSON).
    expect(file.hdus[0].dataBytes).toBe(70);
    expect(file.hdus[1].dataBytes).toBe(120);
    expect(readFitsTable(bytes).hdu.name).toBe('PHOT');
    expect(readFitsTable(bytes, { hdu: 'zeropts' }).getColumn('band')).toEqual(['J', 'H', 'Ks']);
    expect(readFitsTable(bytes, { hdu: 4 }).getColumn('var')).toEqual([[1, 2], [3], []]);
    expect(() => readFitsTable(bytes, { hdu: 2 })).toThrow(/HDU 2 is an ASCII table, not a binary table/);
    expect(() => readFitsTable(bytes, { hdu: 'NOPE' })).toThrow(/no HDU NOPE found; the file holds 0 PRIMARY \(primary\), 1 CUBE/);
  });

  it('describes columns: TFORM, repeat, unit, TDIM, TNULL, scaling, variable-length descriptors', () => {
    const t = readFitsTable(load('all_types.fits'));
    const byName = Object.fromEntries(t.columns.map((c) => [c.name, c]));
    expect(byName.float.unit).toBe('mag');
    expect(byName.vec.repeat).toBe(3);
    expect(byName.matrix.dims).toEqual([3, 2]);
    expect(byName.varint.variableLength).toBe('P');
    expect(byName.vardouble.variableLength).toBe('Q');
    const s = readFitsTable(load('scaled.fits'));
    const u64 = s.columns.find((c) => c.name === 'u64')!;
    expect(u64.zero).toBe(9223372036854775808n);
    expect(s.columns.find((c) => c.name === 'ni')!.nullValue).toBe(-999);
  });

  it('getFloat64 agrees with getColumn for numeric columns, NaN where astropy has null', () => {
    const s = readFitsTable(load('scaled.fits'));
    for (const name of ['u16', 'u32', 'i8', 'mag_milli', 'flux_scaled', 'nb', 'ni', 'nj', 'nk']) {
      const cells = s.getColumn(name);
      const fast = Array.from(s.getFloat64(name));
      expect(fast, name).toEqual(cells.map((c) => (c === null ? NaN : Number(c as number | bigint))));
    }
    expect(() => s.getFloat64('nope')).toThrow(/has no column "nope"/);
    const a = readFitsTable(load('all_types.fits'));
    expect(() => a.getFloat64('vec')).toThrow(/column "vec" \(TFORM 3E\) is not a numeric scalar column/);
  });

  it('rows() gives one object per row', () => {
    const t = readFitsTable(load('multi_hdu.fits'));
    expect(t.rows()).toEqual([
      { id: 'kst-0001', V: 9.81 },
      { id: 'kst-0002', V: 10.02 },
    ]);
  });
});

describe('FITS image headers → observation metadata', () => {
  it('reads FILTER, EXPTIME, DATE-OBS, AIRMASS, OBJECT, sexagesimal RA/DEC and MAGZP', () => {
    const meta = readFitsImageHeader(load('image_header.fits'));
    expect(meta).toMatchObject({
      hdu: 0,
      object: 'Hollow Lantern 12',
      filter: 'V',
      exptimeS: 120,
      dateObs: '2026-03-14T21:07:33.250',
      airmass: 1.234,
      positionFrom: 'RA/DEC',
      zeroPointMag: 24.812,
      zeroPointErrMag: 0.015,
      zeroPointKeyword: 'MAGZP',
    });
    // 05:35:17.30 h = 83.822083°, −05:23:28.0 = −5.391111° (sexagesimal arithmetic).
    expect(meta.raDeg).toBeCloseTo(83.8220833, 6);
    expect(meta.decDeg).toBeCloseTo(-5.3911111, 6);
    expect(meta.header.get('DEXP')).toBe(1500);
    expect(meta.header.get('KILN DET GAIN')).toBe(1.75);
    expect(meta.header.commentary('HISTORY')).toEqual(['made by scripts/references/make_fits_fixtures.py']);
  });

  it('an extension uses its own zero-point and WCS position, inheriting OBJECT from the primary', () => {
    const meta = readFitsImageHeader(load('image_header.fits'), { hdu: 1 });
    expect(meta.zeroPointKeyword).toBe('PHOTZP');
    expect(meta.zeroPointMag).toBe(25.1);
    expect(meta.positionFrom).toBe('CRVAL1/CRVAL2');
    expect(meta.raDeg).toBe(83.8221);
    expect(meta.object).toBe('Hollow Lantern 12');
  });

  it('works on a header-only upload whose data is cut off', () => {
    const bytes = load('image_header.fits').slice(0, 2880 + 50);
    const meta = readFitsImageHeader(bytes);
    expect(meta.filter).toBe('V');
    expect(meta.warnings.join(' ')).toMatch(/HDU 0 data is cut short/);
  });
});

describe('the real benchmark table (Gaia FGK benchmark stars v3, Soubiran et al. 2024)', () => {
  it('reads ../shared/data/benchmark/gbs_v3_dev_half.fits as astropy does', () => {
    const file = readFits(new Uint8Array(readFileSync(benchmark)), { source: 'gbs_v3_dev_half.fits' });
    const expected = astropy('gbs_v3_dev_half.astropy.json');
    expect(file.hdus.length).toBe(expected.hdus.length);
    for (const e of expected.hdus) expect(headerAsJson(file.hdus[e.index].header.cards)).toEqual(e.header);
    const t = file.hdus[1].table!;
    expect(t.rowCount).toBe(96);
    expect(t.columns.length).toBe(117);
    for (const [col, values] of Object.entries(expected.hdus[1].columns!)) {
      expect(t.getColumn(col).slice(0, values.length).map(asJson), col).toEqual(values);
    }
  });
});

describe('malformed FITS gets a clear error naming the HDU, card and byte', () => {
  const good = load('all_types.fits');

  it('not FITS at all', () => {
    const csv = new TextEncoder().encode('id,V,V_err\nkst-1,9.8,0.02\n');
    expect(() => readFits(csv, { source: 'stars.csv' })).toThrow(/stars\.csv: not a FITS file: it must begin with the card "SIMPLE  ="/);
    expect(() => readFits(new Uint8Array(0), { source: 'x.fits' })).toThrow(/x\.fits: the file is empty/);
  });

  it('truncated data', () => {
    const cut = good.slice(0, good.length - 2880);
    let err: FitsError | undefined;
    try {
      readFits(cut, { source: 'cut.fits' });
    } catch (e) {
      err = e as FitsError;
    }
    expect(err).toBeInstanceOf(FitsError);
    expect(err!.message).toMatch(/cut\.fits: truncated file: HDU 1 declares \d+ bytes of data from byte 8640, but the file ends at byte 8640 \(\d+ bytes missing\)/);
    expect(err!.hdu).toBe(1);
  });

  it('missing END card', () => {
    const noEnd = patchCard(good.slice(0, 2880), 'END', '');
    expect(() => readFits(noEnd, { source: 'h.fits' })).toThrow(/h\.fits: HDU 0 header has no END card \(read 36 cards from byte 0/);
  });

  it('wrong BITPIX', () => {
    const bad = patchCard(good, 'BITPIX  =', 'BITPIX  =                   12 / wrong');
    expect(() => readFits(bad)).toThrow(/HDU 0 header card 2: BITPIX = 12 is not one of 8, 16, 32, 64, -32, -64/);
    const badTable = patchCard(good, 'BITPIX  =', 'BITPIX  =                   16', 2880);
    expect(() => readFits(badTable)).toThrow(/HDU 1: a BINTABLE needs BITPIX = 8, NAXIS = 2 and GCOUNT = 1/);
  });

  it('unknown TFORM names the column and card', () => {
    const bad = patchCard(good, 'TFORM1  =', "TFORM1  = 'Z       '");
    expect(() => readFits(bad)).toThrow(/HDU 1 header card 10: column 1 \(flag\) has unknown TFORM1 = 'Z' \(expected rT with T one of L X B I J K A E D C M/);
  });

  it('row size that disagrees with NAXIS1', () => {
    const bad = patchCard(good, 'NAXIS1  =', 'NAXIS1  =                  999', 2880);
    expect(() => readFits(bad)).toThrow(/TFORMs add up to \d+ bytes per row but NAXIS1 = 999|truncated file/);
  });

  it('non-ASCII byte in a header', () => {
    const bad = good.slice();
    bad[2880 + 80 * 3 + 40] = 0xe9;
    expect(() => readFits(bad)).toThrow(/HDU 1 header card 4 \(byte 3160\): byte 0xe9 is not printable ASCII/);
  });

  it('a missing final padding is a warning, not an error; trailing junk is reported', () => {
    const bytes = load('multi_hdu.fits');
    const file = readFits(bytes);
    const last = file.hdus[file.hdus.length - 1];
    const short = bytes.slice(0, last.dataOffset + last.dataBytes);
    const read = readFits(short);
    expect(read.hdus.length).toBe(5);
    expect(read.warnings[0]).toMatch(/not a multiple of the FITS block size 2880/);
    const junk = new Uint8Array(bytes.length + 100);
    junk.set(bytes);
    expect(readFits(junk).warnings[0]).toMatch(/100 bytes after the last HDU \(from byte \d+\) are not a FITS extension/);
  });

  it('a variable-length descriptor pointing outside the heap', () => {
    const t = readFitsTable(good);
    const col = t.columns.find((c) => c.name === 'varint')!;
    const bad = good.slice();
    const pos = t.hdu.dataOffset + col.offsetInRow;
    new DataView(bad.buffer).setInt32(pos + 4, 1_000_000);
    expect(() => readFitsTable(bad).getColumn('varint')).toThrow(/column "varint" row 1: variable-length array descriptor \(3 elements at heap offset 1000000\) points outside the heap/);
  });
});

const hasAstropy = spawnSync('/usr/bin/python3', ['-c', 'import astropy'], { stdio: 'ignore' }).status === 0;

describe('fixtures are reproducible', () => {
  it.skipIf(!hasAstropy)('re-running scripts/references/make_fits_fixtures.py gives the committed files byte for byte', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'starkiln-fits-'));
    try {
      execFileSync('/usr/bin/python3', [path.join(root, 'scripts/references/make_fits_fixtures.py'), dir], { stdio: 'pipe' });
      const made = readdirSync(dir).sort();
      expect(made.length).toBeGreaterThanOrEqual(9);
      for (const f of made) {
        expect(existsSync(path.join(fixtures, f)), f).toBe(true);
        expect(Buffer.compare(readFileSync(path.join(dir, f)), readFileSync(path.join(fixtures, f))), f).toBe(0);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
