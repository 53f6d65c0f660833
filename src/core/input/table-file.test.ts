// A photometry file's bytes → stars with measurements and problems naming file, row, line and
// column, through the one path the web intake and `starkiln fit` share: readUpload (format from the
// content) → detectMapping (column names) → applyMapping (rows and checks). Canonical wide and long
// formats per docs/science.md, "Interfaces"; quoting per RFC 4180. Star names are invented; the numbers
// are arbitrary inputs, not reference values.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { STARTER_BAND_KEYS } from '../bands';
import { applyMapping, detectMapping, type Mapping, type MappingProblem } from './mapping';
import { readUpload, UnreadableFile } from './table-file';

const root = fileURLToPath(new URL('../../..', import.meta.url));
// The starter library's keys (docs/science.md, "Interfaces"); passed in, as the CLI and intake pass the library's.
const KEYS = STARTER_BAND_KEYS;
const errors = (ps: MappingProblem[]) => ps.filter((p) => p.severity === 'error');

function tableOf(input: string | Uint8Array, file: string) {
  const read = readUpload(typeof input === 'string' ? new TextEncoder().encode(input) : input, file);
  if (read.format === 'fits-image') throw new Error(`${file} is an image`);
  return read;
}

/** The file read, its mapping detected from the names (as the mapping screen proposes it) and applied. */
function read(input: string | Uint8Array, file = 'stars.csv') {
  const { format, table } = tableOf(input, file);
  const detected = detectMapping(table.columns, table.rows.slice(0, 50), KEYS);
  return { format, table, detected, ...applyMapping(table, detected, detected.rules, { bandKeys: KEYS }) };
}

describe('wide tables', () => {
  it('reads star columns, magnitudes, fluxes and upper limits', () => {
    const t = read(
      [
        'id,ra,dec,parallax_mas,parallax_err_mas,av,V,V_err,Ks,Ks_err,W1_jy,W1_jy_err,W4_ul,FUV_jy_ul',
        'kiln-001,10.5,-20.25,12.5,0.05,0.1,9.81,0.02,7.9,0.03,0.51,0.01,6.5,',
        'kiln-002,,,,,,10.1,0.03,,,,,,2e-5',
      ].join('\n'),
    );
    expect(t.format).toBe('csv');
    expect(t.detected.layout).toBe('wide');
    expect(t.problems).toEqual([]);
    expect(t.stars).toEqual([
      {
        id: 'kiln-001',
        raDeg: 10.5,
        decDeg: -20.25,
        parallaxMas: 12.5,
        parallaxErrMas: 0.05,
        avMag: 0.1,
        row: 1,
        measurements: [
          { bandKey: 'V', mag: 9.81, magErr: 0.02 },
          { bandKey: 'Ks', mag: 7.9, magErr: 0.03 },
          { bandKey: 'W1', fnuJy: 0.51, fnuErrJy: 0.01 },
          { bandKey: 'W4', mag: 6.5, upperLimit: true },
        ],
      },
      { id: 'kiln-002', row: 2, measurements: [{ bandKey: 'V', mag: 10.1, magErr: 0.03 }, { bandKey: 'FUV', fnuJy: 2e-5, upperLimit: true }] },
    ]);
    expect(t.table.lines).toEqual([2, 3]);
  });

  it('band keys are case-sensitive: u is SDSS, U is Bessell', () => {
    const t = read('id,u,u_err,U,U_err\nx,15,0.1,14,0.2');
    expect(t.problems).toEqual([]);
    expect(Object.fromEntries(t.stars[0].measurements.map((m) => [m.bandKey, m]))).toEqual({
      U: { bandKey: 'U', mag: 14, magErr: 0.2 },
      u: { bandKey: 'u', mag: 15, magErr: 0.1 },
    });
  });

  it('treats empty cells and common missing-value spellings as no measurement', () => {
    const t = read('id,V,V_err,B,B_err,R,R_err\nx,NaN,,--,,null,');
    expect(t.problems).toEqual([]);
    expect(t.stars).toEqual([{ id: 'x', row: 1, measurements: [] }]);
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
    expect(errors(t.problems).map((p) => [p.file, p.line, p.column?.number ?? null, p.message])).toEqual([
      ['stars.csv', 4, 2, 'row 2 (file line 4), column V: V magnitude "nine" is not a number'],
      ['stars.csv', 5, 3, 'row 3 (file line 5), column V_err: negative error -0.02'],
      ['stars.csv', 6, 1, 'row 4 (file line 6), column id: duplicate star id "good-1" (first in row 1); the row was left out'],
      ['stars.csv', 7, 1, 'row 5 (file line 7), column id: missing star id; the row was left out'],
      ['stars.csv', 8, null, 'row 6 (file line 8): has 3 values but the header has 5 columns; the row was left out'],
      ['stars.csv', 9, 2, 'row 7 (file line 9), column V: V magnitude "0x10" is not a number'],
    ]);
    expect(t.problems).toHaveLength(6);
    expect(t.problems[0]).toMatchObject({ file: 'stars.csv', row: 2, line: 4, column: { name: 'V', number: 2 }, severity: 'error' });
  });

  it('warns about a column that looks like a band with its key mistyped, and says which key it meant', () => {
    const t = read('id,KS,KS_err,v_jy,Vmag,notes,RPP,hd\nx,7,0.1,1,2,hello,3,4');
    const msgs = t.problems.map((p) => [p.severity, p.column?.name, p.column?.number, p.message]);
    expect(msgs).toEqual([
      ['warning', 'KS', 2, `unknown band column "KS" (band keys are case-sensitive); did you mean 'Ks'? The column was not read`],
      ['warning', 'KS_err', 3, `unknown band column "KS_err" (band keys are case-sensitive); did you mean 'Ks_err'? The column was not read`],
      ['warning', 'v_jy', 4, `unknown band column "v_jy" (band keys are case-sensitive); did you mean 'V_jy'? The column was not read`],
      // One edit away may be a coincidence, but the data would be lost without a word.
      ['warning', 'RPP', 7, `unknown band column "RPP" (band keys are case-sensitive); did you mean 'RP'? The column was not read`],
      // Vmag is a catalogue name for V, read as such; without an e_Vmag its value is not used.
      ['warning', 'Vmag', 5, "V: no error column is mapped, so this band is not used in any row; map each band's error column (such as V_err or e_V)"],
    ]);
    // The detection proposes the same on the mapping screen, where the analyst can map the column.
    expect(t.detected.notes.KS).toBe(`unknown band column "KS" (band keys are case-sensitive); did you mean 'Ks'?`);
    // Vmag is a catalogue name the detection reads as V; 'hd' is a Henry Draper number, not a mistyped Hp;
    // notes is neither.
    expect(t.detected.columns.Vmag).toEqual({ role: 'mag', band: 'V' });
    expect(t.detected.columns.hd).toEqual({ role: 'ignore' });
    expect(t.detected.notes.hd).not.toMatch(/did you mean/);
    expect(t.detected.notes.notes).toBeUndefined();
    // Warnings only: the star is kept, with nothing read from the mistyped columns.
    expect(t.stars).toEqual([{ id: 'x', row: 1, measurements: [] }]);
  });

  it('bands with no error column mapped are named once at the top of the report, not once per row', () => {
    // Gaia DR3 archive spelling (from memory): gaia_source has phot_<band>_mean_mag but no magnitude error column.
    const rows = Array.from({ length: 125 }, (_, i) => `star-${i},${9 + i / 100},0.02,10.1,10.3,9.6`).join('\n');
    const t = read(`id,V,V_err,phot_g_mean_mag,phot_bp_mean_mag,phot_rp_mean_mag\n${rows}`);
    expect(t.problems.map((p) => [p.severity, p.row, p.column?.name, p.message])).toEqual([
      ['warning', 0, 'phot_g_mean_mag', "G, BP, RP: no error column is mapped, so these bands are not used in any row; map each band's error column (such as G_err or e_G)"],
    ]);
    expect(t.stars).toHaveLength(125);
    expect(t.stars.every((s) => s.measurements.length === 1 && s.measurements[0].bandKey === 'V')).toBe(true);
  });

  it('a magnitude without an error is not used, with a warning; a value and an upper limit in one band is an error', () => {
    const t = read('id,V,V_err,B,B_err,B_ul\nx,9.8,,10.1,0.02,11\ny,9.9,0.02,10.2,0.02,');
    expect(t.problems.map((p) => [p.severity, p.row, p.column?.name, p.message])).toEqual([
      ['warning', 1, 'V_err', 'row 1 (file line 2), column V_err: band V has a magnitude but no error; the value was not used'],
      ['error', 1, 'B', 'row 1 (file line 2), column B: band B has both a value and an upper limit; keep one'],
    ]);
    expect(t.stars.map((s) => s.id)).toEqual(['y']);
    // Two kinds of value column for one band (magnitude and flux) is a mistake in the mapping: nothing is read.
    const both = read('id,V,V_err,B,B_jy,B_jy_err\nx,9.8,0.02,10.1,0.2,0.01');
    expect(errors(both.problems).map((p) => p.message)).toEqual([`band B has more than one value column (magnitude, flux (Jy)); keep one per file, or import them as separate sources`]);
    expect(both.stars).toEqual([]);
  });

  it('checks positions and parallax errors', () => {
    const t = read('id,ra,dec,parallax_err_mas\nx,361,0,0.1\ny,1,-91,0.1\nz,1,1,-0.1');
    expect(errors(t.problems).map((p) => [p.row, p.column!.name, p.message])).toEqual([
      [1, 'ra', 'row 1 (file line 2), column ra: right ascension 361 is outside 0 ≤ ra < 360 degrees'],
      [2, 'dec', 'row 2 (file line 3), column dec: declination -91 is outside −90…90 degrees'],
      [3, 'parallax_err_mas', 'row 3 (file line 4), column parallax_err_mas: negative parallax error -0.1'],
    ]);
    expect(t.stars).toEqual([]);
  });

  it('empty file, comments only, header only, no id column, binary content: a clear message naming the file', () => {
    const refused = (input: string | Uint8Array, file = 'stars.csv') => {
      try {
        tableOf(input, file);
      } catch (e) {
        if (e instanceof UnreadableFile) return e.message;
        throw e;
      }
      throw new Error('read without complaint');
    };
    expect(refused('')).toBe('stars.csv: the file is empty');
    expect(refused('# only a comment\n\n')).toBe('stars.csv: the file has no header line with column names');
    expect(refused('id,V,V_err\n')).toBe('stars.csv: the file has a header but no data rows');
    expect(refused(new Uint8Array([0x69, 0x64, 0, 0, 0xff]), 'x.csv')).toBe('x.csv: binary content (byte 0x00 at byte offset 2), not CSV/TSV text. Upload a CSV or TSV text file, a VOTable or a FITS table.');
    const noId = read('col,V,V_err\nx,1,0.1');
    expect(noId.problems).toEqual([{ file: 'stars.csv', row: 0, severity: 'error', message: 'no column is mapped to the star id' }]);
    expect(noId.stars).toEqual([]);
    expect(noId.rejectedRows).toBe(1);
  });

  it('reads TSV the same way', () => {
    const t = read('id\tV\tV_err\nx\t9.5\t0.01', 'stars.tsv');
    expect(t.format).toBe('tsv');
    expect(t.stars[0].measurements).toEqual([{ bandKey: 'V', mag: 9.5, magErr: 0.01 }]);
  });
});

describe('catalogue column names', () => {
  it('maps catalogue names by detection or by hand, leaves a column out on request, and names the original column in problems', () => {
    const text = 'hip,j_m,j_msigcom,plx,junk\nHIP1,5.1,0.02,10,x\nHIP2,5.x,0.02,10,y';
    const { table } = tableOf(text, 'cat.csv');
    const byHand: Mapping = { layout: 'wide', columns: { hip: { role: 'id' }, j_m: { role: 'mag', band: 'J' }, j_msigcom: { role: 'mag_err', band: 'J' }, plx: { role: 'parallax' }, junk: { role: 'ignore' } } };
    const detected = detectMapping(table.columns, table.rows, KEYS);
    expect(detected.columns).toEqual(byHand.columns);
    const t = applyMapping(table, byHand, { quality: [] }, { bandKeys: KEYS });
    expect(t.stars).toEqual([{ id: 'HIP1', parallaxMas: 10, row: 1, measurements: [{ bandKey: 'J', mag: 5.1, magErr: 0.02 }] }]);
    expect(t.problems).toEqual([{ file: 'cat.csv', row: 2, line: 3, column: { name: 'j_m', number: 2 }, severity: 'error', message: 'row 2 (file line 3), column j_m: J magnitude "5.x" is not a number' }]);
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
    expect(t.detected.layout).toBe('long');
    expect(t.problems).toEqual([]);
    expect(t.stars).toEqual([
      {
        id: 'kiln-1',
        parallaxMas: 12.5,
        row: 1,
        measurements: [
          { bandKey: 'V', mag: 9.8, magErr: 0.02 },
          { bandKey: 'W1', fnuJy: 0.5, fnuErrJy: 0.01 },
          { bandKey: 'W4', mag: 6.1, upperLimit: true },
        ],
      },
      { id: 'kiln-2', row: 2, measurements: [{ bandKey: 'G', mag: 11, magErr: 0.003 }] },
    ]);
  });

  it('a star with a bad row is left out whole; problems name row, line and column', () => {
    const t = read(['id,band,mag,mag_err,parallax_mas', 'a,V,9.8,0.02,10', 'a,KS,7.0,0.02,10', 'b,V,9.0,0.02,5', 'b,V,9.1,0.02,5', 'c,J,8,0.02,1', 'c,H,7.5,0.02,2'].join('\n'));
    expect(t.detected.layout).toBe('long');
    expect(t.stars).toEqual([]);
    expect(errors(t.problems).map((p) => [p.file, p.line, p.column?.number ?? null, p.message])).toEqual([
      ['stars.csv', 3, 2, `row 2 (file line 3), column band: unknown band "KS" (band keys are case-sensitive; did you mean 'Ks'?)`],
      ['stars.csv', 5, 2, 'row 4 (file line 5), column band: duplicate: star "b" already has band V in row 3'],
      ['stars.csv', 7, 5, 'row 6 (file line 7), column parallax_mas: parallax 2 differs from 1 given for star "c" in an earlier row'],
      ['stars.csv', 2, null, 'star "a" was left out because of the errors in its rows'],
      ['stars.csv', 4, null, 'star "b" was left out because of the errors in its rows'],
      ['stars.csv', 6, null, 'star "c" was left out because of the errors in its rows'],
    ]);
    expect(t.rejectedRows).toBe(6);
  });

  it('needs id, band and mag or jy', () => {
    const t = read('id,band,flux\nx,V,1');
    expect(t.detected.layout).toBe('long');
    expect(errors(t.problems).map((p) => p.message)).toEqual(['the long format needs a magnitude or a flux (Jy) column']);
    expect(t.stars).toEqual([]);
  });
});

describe('fixture tables', () => {
  const dir = path.join(root, 'fixtures/tables');
  const file = (name: string) => read(new Uint8Array(readFileSync(path.join(dir, name))), name);
  const norm = (stars: ReturnType<typeof read>['stars']) => stars.map((s) => ({ id: s.id, plx: s.parallaxMas, m: [...s.measurements].sort((a, b) => a.bandKey.localeCompare(b.bandKey)) }));

  it('fixtures/tables/wide_small.csv and long_small.csv describe the same stars', () => {
    const wide = file('wide_small.csv');
    const long = file('long_small.csv');
    expect(wide.detected.layout).toBe('wide');
    expect(long.detected.layout).toBe('long');
    expect(wide.problems).toEqual([]);
    expect(long.problems).toEqual([]);
    expect(wide.stars.map((s) => s.id)).toEqual(['ember-01', 'ember-02', 'ember-03, B']);
    expect(norm(long.stars)).toEqual(norm(wide.stars));
  });

  it('fixtures/tables/vizier_small.tsv (VizieR TSV shape): units and dashes lines skipped, units kept, same stars as wide_small.csv', () => {
    const viz = file('vizier_small.tsv');
    expect(viz.format).toBe('tsv');
    expect(viz.table.columns).toEqual(['Name', '_RAJ2000', '_DEJ2000', 'Plx', 'e_Plx', 'Vmag', 'e_Vmag', 'Ksmag', 'e_Ksmag']);
    expect(viz.table.units).toEqual([undefined, 'deg', 'deg', 'mas', 'mas', 'mag', 'mag', 'mag', 'mag']);
    // Header on line 8: the first data row is line 11, after the units and dashes lines.
    expect(viz.table.lines).toEqual([11, 12, 13]);
    expect(viz.problems).toEqual([]);
    const wide = file('wide_small.csv');
    const onlyVKs = (stars: ReturnType<typeof read>['stars']) =>
      norm(stars).map((s) => ({ ...s, m: s.m.filter((m) => m.bandKey === 'V' || m.bandKey === 'Ks') }));
    expect(norm(viz.stars)).toEqual(onlyVKs(wide.stars));
    expect(viz.stars.map((s) => [s.raDeg, s.decDeg, s.parallaxErrMas])).toEqual(wide.stars.map((s) => [s.raDeg, s.decDeg, s.parallaxErrMas]));
  });
});
