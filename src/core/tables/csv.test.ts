// Canonical wide and long photometry tables (product.md, "Interfaces"); quoting per RFC 4180.
// Star names are invented; the numbers are arbitrary inputs, not reference values.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { closestBandKey, formatProblem, readPhotometryTable, type TableProblem } from './csv';
import { decodeText, parseDelimited } from './delimited';

const root = fileURLToPath(new URL('../../..', import.meta.url));
// The starter library's keys (product.md, "Interfaces"); passed in, as the CLI passes the library's.
const KEYS = ['U', 'B', 'V', 'R', 'I', 'J', 'H', 'Ks', 'G', 'BP', 'RP', 'u', 'g', 'r', 'i', 'z', 'W1', 'W2', 'W3', 'W4', 'BT', 'VT', 'Hp', 'FUV', 'NUV'];
const read = (text: string, file = 'stars.csv') => readPhotometryTable(text, { file, bandKeys: KEYS });
const errors = (ps: TableProblem[]) => ps.filter((p) => p.severity === 'error');

describe('RFC 4180 splitting', () => {
  it('handles quotes, doubled quotes, delimiters and line breaks inside quotes, CRLF, BOM and comments', () => {
    const text = '\ufeff# made by hand\n#second\nid,note,V\r\n"a,1","say ""hi""",9.5\r\nb,"two\nlines",10\r\n\r\nc, plain ,11';
    const t = parseDelimited(text);
    expect(t.comments).toEqual(['made by hand', 'second']);
    expect(t.header).toEqual(['id', 'note', 'V']);
    expect(t.headerLine).toBe(3);
    expect(t.rows).toEqual([
      ['a,1', 'say "hi"', '9.5'],
      ['b', 'two\nlines', '10'],
      ['c', ' plain ', '11'],
    ]);
    expect(t.lines).toEqual([4, 5, 8]);
  });

  it('detects tab and semicolon delimiters', () => {
    expect(parseDelimited('id\tV\nx\t1').rows).toEqual([['x', '1']]);
    expect(parseDelimited('id;V\nx;1').delimiter).toBe(';');
  });

  it('reports an unclosed quote with its line', () => {
    expect(() => parseDelimited('id,V\nx,"9.5\ny,1\n', { source: 's.csv' })).toThrow(/s\.csv:2: a quoted field opened here is never closed/);
  });

  it('refuses binary content and names what it looks like', () => {
    expect(() => decodeText(new Uint8Array([0x69, 0x64, 0x00, 0x01]), 'x.csv')).toThrow(/x\.csv: binary content \(byte 0x00 at byte offset 2\)/);
    expect(() => decodeText(new Uint8Array([0x50, 0x4b, 3, 4, 0, 0]), 'x.csv')).toThrow(/ZIP archive/);
    expect(() => decodeText(new TextEncoder().encode('SIMPLE  =                    T'), 'x.csv')).toThrow(/this is a FITS file/);
    // Latin-1 bytes that are not UTF-8 are still read.
    expect(decodeText(new Uint8Array([0x69, 0x64, 0x0a, 0xe9]), 'x.csv')).toBe('id\n\u00e9');
  });
});

describe('wide tables', () => {
  it('reads star columns, magnitudes, fluxes and upper limits', () => {
    const t = read(
      [
        'id,ra,dec,parallax_mas,parallax_err_mas,av,V,V_err,Ks,Ks_err,W1_jy,W1_jy_err,W4_ul,FUV_jy_ul',
        'kiln-001,10.5,-20.25,12.5,0.05,0.1,9.81,0.02,7.9,0.03,0.51,0.01,6.5,',
        'kiln-002,,,,,,10.1,0.03,,,,,,2e-5',
      ].join('\n'),
    );
    expect(t.format).toBe('wide');
    expect(t.problems).toEqual([]);
    expect(t.bandKeys).toEqual(['V', 'Ks', 'W1', 'W4', 'FUV']);
    expect(t.stars).toEqual([
      {
        id: 'kiln-001',
        raDeg: 10.5,
        decDeg: -20.25,
        parallaxMas: 12.5,
        parallaxErrMas: 0.05,
        avMag: 0.1,
        row: 1,
        line: 2,
        measurements: [
          { bandKey: 'V', mag: 9.81, magErr: 0.02 },
          { bandKey: 'Ks', mag: 7.9, magErr: 0.03 },
          { bandKey: 'W1', fnuJy: 0.51, fnuErrJy: 0.01 },
          { bandKey: 'W4', mag: 6.5, upperLimit: true },
        ],
      },
      { id: 'kiln-002', row: 2, line: 3, measurements: [{ bandKey: 'V', mag: 10.1, magErr: 0.03 }, { bandKey: 'FUV', fnuJy: 2e-5, upperLimit: true }] },
    ]);
  });

  it('band keys are case-sensitive: u is SDSS, U is Bessell', () => {
    const t = read('id,u,u_err,U,U_err\nx,15,0.1,14,0.1');
    expect(t.stars[0].measurements.map((m) => m.bandKey)).toEqual(['U', 'u']);
  });

  it('treats empty cells and common missing-value spellings as no measurement', () => {
    const t = read('id,V,V_err,B,B_err,R,R_err\nx,NaN,,--,,null,');
    expect(t.problems).toEqual([]);
    expect(t.stars[0].measurements).toEqual([]);
  });

  it('reports bad rows with file, data row, line and column, and keeps the good rows', () => {
    const text = [
      '# provenance line',
      'id,V,V_err,Ks,Ks_err',
      'good-1,9.8,0.02,7.1,0.02',
      'bad-mag,nine,0.02,7.1,0.02',
      'bad-err,9.8,-0.02,7.1,0.02',
      'good-1,9.9,0.02,7.2,0.02',
      ',9.9,0.02,7.2,0.02',
      'ragged,9.9,0.02',
      'hex,0x10,0.02,,',
      'good-2,10.0,0.02,,',
    ].join('\n');
    const t = read(text);
    expect(t.stars.map((s) => s.id)).toEqual(['good-1', 'good-2']);
    expect(t.rejectedRows).toBe(6);
    const lines = errors(t.problems).map(formatProblem);
    expect(lines).toEqual([
      'stars.csv:4:2: data row 2, column V: magnitude "nine" is not a number',
      'stars.csv:5:3: data row 3, column V_err: negative error -0.02 mag',
      'stars.csv:6:1: data row 4, column id: duplicate id "good-1" (first seen in row 1); this row was left out',
      'stars.csv:7:1: data row 5, column id: missing id; the row was left out',
      'stars.csv:8: data row 6: has 3 fields but the header has 5; the row was left out (a missing or extra delimiter, or an unquoted "," inside a value?)',
      'stars.csv:9:2: data row 7, column V: magnitude "0x10" is not a number',
    ]);
    expect(t.problems[0]).toMatchObject({ file: 'stars.csv', row: 2, line: 4, column: { name: 'V', number: 2 } });
  });

  it('suggests the band key a mistyped column meant', () => {
    const t = read('id,KS,KS_err,v_jy,Vmag,notes,RPP,hd\nx,7,0.1,1,2,hello,3,4');
    const msgs = t.problems.map((p) => [p.severity, p.column?.name, p.message]);
    expect(msgs).toContainEqual(['error', 'KS', `unknown band column "KS" (band keys are case-sensitive); did you mean 'Ks'? The column was not read`]);
    expect(msgs).toContainEqual(['error', 'KS_err', `unknown band column "KS_err" (band keys are case-sensitive); did you mean 'Ks_err'? The column was not read`]);
    expect(msgs).toContainEqual(['error', 'v_jy', `unknown band column "v_jy" (band keys are case-sensitive); did you mean 'V_jy'? The column was not read`]);
    expect(msgs).toContainEqual(['error', 'Vmag', `unknown band column "Vmag" (band keys are case-sensitive); did you mean 'V'? The column was not read`]);
    // One edit away may be a coincidence: a warning only.
    expect(msgs).toContainEqual(['warning', 'RPP', `unknown band column "RPP" (band keys are case-sensitive); did you mean 'RP'? The column was not read`]);
    expect(msgs).toContainEqual(['warning', 'hd', `unknown band column "hd" (band keys are case-sensitive); did you mean 'Hp'? The column was not read`]);
    expect(msgs).toContainEqual(['warning', undefined, expect.stringMatching(/^1 column is neither a star column .* and was ignored: notes$/)]);
    expect(closestBandKey('w1', KEYS)).toBe('W1');
    expect(closestBandKey('RPP', KEYS)).toBe('RP');
    expect(closestBandKey('parallax', KEYS)).toBeUndefined();
  });

  it('a magnitude without an error is not used, with a warning; two kinds of value in one band is an error', () => {
    const t = read('id,V,V_err,B,B_jy,B_jy_err\nx,9.8,,10.1,0.2,0.01');
    expect(t.problems.map((p) => [p.severity, p.message])).toEqual([
      ['error', 'data row 1, column B: band B has more than one of B, B_jy, B_ul, B_jy_ul filled; keep one'],
      ['warning', 'data row 1, column V: band V has a magnitude but no error in V_err; the measurement was not used'],
    ]);
    expect(t.stars).toEqual([]);
  });

  it('checks positions and parallax errors', () => {
    const t = read('id,ra,dec,parallax_err_mas\nx,361,0,0.1\ny,1,-91,0.1\nz,1,1,-0.1');
    expect(errors(t.problems).map((p) => p.column!.name)).toEqual(['ra', 'dec', 'parallax_err_mas']);
    expect(t.stars).toEqual([]);
  });

  it('empty file, header only, no id column, binary content', () => {
    expect(read('').problems[0].message).toMatch(/the file is empty/);
    expect(read('# only a comment\n\n').problems[0].message).toMatch(/the file is empty/);
    expect(read('id,V,V_err\n').stars).toEqual([]);
    expect(read('name,V,V_err\nx,1,0.1').problems.at(-1)!.message).toMatch(/the header has no "id" column/);
    const bin = readPhotometryTable(new Uint8Array([0x69, 0x64, 0, 0, 0xff]), { file: 'x.csv', bandKeys: KEYS });
    expect(formatProblem(bin.problems[0])).toBe('x.csv:0: binary content (byte 0x00 at byte offset 2), not CSV/TSV text');
  });

  it('reads TSV the same way', () => {
    const t = read('id\tV\tV_err\nx\t9.5\t0.01', 'stars.tsv');
    expect(t.delimiter).toBe('\t');
    expect(t.stars[0].measurements).toEqual([{ bandKey: 'V', mag: 9.5, magErr: 0.01 }]);
  });
});

describe('column renaming (columnMap)', () => {
  it('maps catalogue names to canonical ones, drops columns mapped to "-", and names the original column in problems', () => {
    const text = 'hip,j_m,j_msigcom,plx,junk\nHIP1,5.1,0.02,10,x\nHIP2,5.x,0.02,10,y';
    const t = readPhotometryTable(text, { file: 'cat.csv', bandKeys: KEYS, columnMap: { hip: 'id', j_m: 'J', j_msigcom: 'J_err', plx: 'parallax_mas', junk: '-' } });
    expect(t.stars).toEqual([{ id: 'HIP1', parallaxMas: 10, raDeg: undefined, decDeg: undefined, parallaxErrMas: undefined, avMag: undefined, row: 1, line: 2, measurements: [{ bandKey: 'J', mag: 5.1, magErr: 0.02 }] }]);
    expect(t.problems.map(formatProblem)).toEqual(['cat.csv:3:2: data row 2, column j_m: magnitude "5.x" is not a number']);
  });
});

describe('long tables', () => {
  it('groups rows by star, reads mag, jy and upper limits, and per-star columns', () => {
    const t = read(
      [
        'id,band,mag,mag_err,jy,jy_err,ul,parallax_mas',
        'kiln-1,V,9.8,0.02,,,,12.5',
        'kiln-2,G,11.0,0.003,,,,',
        'kiln-1,W1,,,0.5,0.01,0,12.5',
        'kiln-1,W4,6.1,,,,1,',
      ].join('\n'),
    );
    expect(t.format).toBe('long');
    expect(t.problems).toEqual([]);
    expect(t.bandKeys).toEqual(['V', 'G', 'W1', 'W4']);
    expect(t.stars).toEqual([
      {
        id: 'kiln-1',
        parallaxMas: 12.5,
        row: 1,
        line: 2,
        measurements: [
          { bandKey: 'V', mag: 9.8, magErr: 0.02 },
          { bandKey: 'W1', fnuJy: 0.5, fnuErrJy: 0.01 },
          { bandKey: 'W4', mag: 6.1, upperLimit: true },
        ],
        raDeg: undefined,
        decDeg: undefined,
        parallaxErrMas: undefined,
        avMag: undefined,
      },
      { id: 'kiln-2', row: 2, line: 3, measurements: [{ bandKey: 'G', mag: 11, magErr: 0.003 }], raDeg: undefined, decDeg: undefined, parallaxMas: undefined, parallaxErrMas: undefined, avMag: undefined },
    ]);
  });

  it('a star with a bad row is left out whole; problems name row and column', () => {
    const t = read(['id,band,mag,mag_err,parallax_mas', 'a,V,9.8,0.02,10', 'a,KS,7.0,0.02,10', 'b,V,9.0,0.02,5', 'b,V,9.1,0.02,5', 'c,J,8,0.02,1', 'c,H,7.5,0.02,2'].join('\n'));
    expect(t.stars).toEqual([]);
    expect(errors(t.problems).map(formatProblem)).toEqual([
      `stars.csv:3:2: data row 2, column band: unknown band "KS" (band keys are case-sensitive); did you mean 'Ks'?`,
      'stars.csv:5:2: data row 4, column band: star "b" already has band V in row 3',
      'stars.csv:7:5: data row 6, column parallax_mas: parallax_mas 2 differs from 1 given for star "c" in an earlier row',
      'stars.csv:2: star "a" was left out because of the errors in its rows above',
      'stars.csv:4: star "b" was left out because of the errors in its rows above',
      'stars.csv:6: star "c" was left out because of the errors in its rows above',
    ]);
    expect(t.rejectedRows).toBe(6);
  });

  it('needs id, band and mag or jy', () => {
    expect(read('id,band,flux\nx,V,1').problems.at(-1)!.message).toMatch(/the long format needs the column mag or jy/);
  });
});

describe('fixture tables', () => {
  it('fixtures/tables/wide_small.csv and long_small.csv describe the same stars', () => {
    const dir = path.join(root, 'fixtures/tables');
    const wide = readPhotometryTable(readFileSync(path.join(dir, 'wide_small.csv')), { file: 'wide_small.csv', bandKeys: KEYS });
    const long = readPhotometryTable(readFileSync(path.join(dir, 'long_small.csv')), { file: 'long_small.csv', bandKeys: KEYS });
    expect(wide.problems).toEqual([]);
    expect(long.problems).toEqual([]);
    const norm = (stars: typeof wide.stars) => stars.map((s) => ({ id: s.id, plx: s.parallaxMas, m: [...s.measurements].sort((a, b) => a.bandKey.localeCompare(b.bandKey)) }));
    expect(norm(long.stars)).toEqual(norm(wide.stars));
  });
});
