// Hostile and malformed input through the readers and the column mapping, the one path the web
// intake and `starkiln fit` share: star ids (length, control, BiDi and zero-width characters — the
// BiDi list is Unicode's UAX #9 formatting characters), numbers that are not finite or not physical,
// invalid UTF-8 and NUL bytes, semicolon files with decimal commas, hostile XML (OWASP XML Security
// cheat sheet: DTDs, entity expansion, external entities, nesting, attribute sizes) and the size,
// row, column, cell and time limits of every reader. Star names are invented; the numbers are
// arbitrary inputs, not reference values.
import { describe, expect, it } from 'vitest';
import { STARTER_BAND_KEYS } from '../bands';
import { applyMapping, detectMapping, type ColumnTable, type MappingProblem } from './mapping';
import { DEFAULT_INPUT_LIMITS, InputLimitError, limitsFromEnv, ReadBudget, shownText } from './limits';
import { starIdProblem } from './star-id';
import { readUpload, UnreadableFile, type ReadUploadOptions } from './table-file';
import { readVoTable, VoTableError } from './votable';
import { bintableHeader, card, data, primary, smallTable } from '../../../tests/support/hostile-fits';

const KEYS = STARTER_BAND_KEYS;
const enc = (s: string) => new TextEncoder().encode(s);
const errors = (ps: MappingProblem[]) => ps.filter((p) => p.severity === 'error');

function read(input: string | Uint8Array, file = 'stars.csv', options: ReadUploadOptions = {}) {
  const r = readUpload(typeof input === 'string' ? enc(input) : input, file, undefined, options);
  if (r.format === 'fits-image') throw new Error('an image');
  const detected = detectMapping(r.table.columns, r.table.rows.slice(0, 50), KEYS);
  return { table: r.table, ...applyMapping(r.table, detected, detected.rules, { bandKeys: KEYS }) };
}

function refusal(input: string | Uint8Array, file = 'stars.csv', options: ReadUploadOptions = {}): UnreadableFile {
  try {
    readUpload(typeof input === 'string' ? enc(input) : input, file, undefined, options);
  } catch (err) {
    expect(err).toBeInstanceOf(UnreadableFile);
    return err as UnreadableFile;
  }
  throw new Error(`${file} was read`);
}

describe('star ids', () => {
  it('a 52 MB id cell is refused naming file, row, file line and column, with a short message', () => {
    const huge = 'x'.repeat(52 * 1024 * 1024);
    const t = read(`id,V,V_err\nember-1,9.5,0.02\n${huge},9.6,0.02\n`);
    expect(t.stars.map((s) => s.id)).toEqual(['ember-1']);
    const [p] = errors(t.problems);
    expect(p).toMatchObject({ file: 'stars.csv', row: 2, line: 3, column: { name: 'id', number: 1 } });
    expect(p.message).toMatch(/^row 2 \(file line 3\), column id: star id "x{40}… \(54525952 characters\)" is longer than 128 characters; the row was left out$/);
    expect(p.message.length).toBeLessThan(200);
  });

  it('128 characters are an id, 129 are not; a character outside the BMP counts once', () => {
    expect(starIdProblem('a'.repeat(128))).toBeNull();
    expect(starIdProblem('a'.repeat(129))).toMatch(/longer than 128 characters/);
    // 128 × U+1D6FC (two UTF-16 units each): 128 characters.
    expect(starIdProblem('\u{1d6fc}'.repeat(128))).toBeNull();
    expect(starIdProblem('\u{1d6fc}'.repeat(129))).toMatch(/longer than 128/);
    // Letters of any script are fine.
    expect(starIdProblem('Ástrid-Ω-星-1')).toBeNull();
  });

  it('NUL, control, BiDi and zero-width characters are named by code point, shown escaped', () => {
    const cases: [string, RegExp][] = [
      ['ember\u0000-1', /contains U\+0000 NUL at character 6/],
      ['ember\u0007', /contains U\+0007 a control character/],
      ['ember\u0085', /contains U\+0085 a control character \(C1\)/],
      ['ember-\u202e1-rebme', /contains U\+202E RIGHT-TO-LEFT OVERRIDE \(a BiDi control\) at character 7/],
      ['\u2066ember\u2069', /U\+2066 LEFT-TO-RIGHT ISOLATE/],
      ['ember\u200e', /U\+200E LEFT-TO-RIGHT MARK/],
      ['ember\u061c', /U\+061C ARABIC LETTER MARK/],
      ['em\u200bber', /U\+200B ZERO WIDTH SPACE/],
      ['em\u200dber', /U\+200D ZERO WIDTH JOINER/],
      ['em\ufeffber', /U\+FEFF ZERO WIDTH NO-BREAK SPACE/],
      ['em\u2060ber', /U\+2060 WORD JOINER/],
    ];
    for (const [id, message] of cases) {
      const p = starIdProblem(id)!;
      expect(p, JSON.stringify(id)).toMatch(message);
      // The message itself holds none of them: it cannot be reordered or hidden on screen.
      expect(p).not.toMatch(/[\u0000-\u001f\u0085\u061c\u200b-\u200f\u202a-\u202e\u2060\u2066-\u2069\ufeff]/);
    }
    expect(shownText('a\u202eb')).toBe('a<U+202E>b');
  });

  it('a BiDi override in a CSV id: the row is refused with row, line and column, the others carry on', () => {
    const t = read('id,V,V_err\nember-1,9.5,0.02\nember-\u202e2,9.6,0.02\nember\u200b-3,9.7,0.02\n');
    expect(t.stars.map((s) => s.id)).toEqual(['ember-1']);
    expect(errors(t.problems).map((p) => [p.row, p.line, p.column?.name, p.message])).toEqual([
      [2, 3, 'id', 'row 2 (file line 3), column id: star id "ember-<U+202E>2" contains U+202E RIGHT-TO-LEFT OVERRIDE (a BiDi control) at character 7; ids may not hold control, BiDi or zero-width characters; the row was left out'],
      [3, 4, 'id', 'row 3 (file line 4), column id: star id "ember<U+200B>-3" contains U+200B ZERO WIDTH SPACE at character 6; ids may not hold control, BiDi or zero-width characters; the row was left out'],
    ]);
  });

  it('a NUL byte inside an id of a CSV file: the file is refused naming row, file line and column', () => {
    const err = refusal('id,V,V_err\nember-1,9.5,0.02\nember\u0000-2,9.6,0.02\n');
    expect(err.message).toBe('stars.csv, row 2 (file line 3), column id: the cell "ember<U+0000>-2" holds a NUL byte (U+0000), which text never holds; nothing was read');
  });

  it('ids from FITS and VOTable pass the same rules (the mapping checks every format alike)', () => {
    const table: ColumnTable = { file: 'cat.vot', columns: ['id', 'V', 'V_err'], rows: [['ember\u202e', 9.5, 0.02], ['y'.repeat(200), 9.5, 0.02], ['ok', 9.5, 0.02]] };
    const m = detectMapping(table.columns, table.rows, KEYS);
    const r = applyMapping(table, m, m.rules, { bandKeys: KEYS });
    expect(r.stars.map((s) => s.id)).toEqual(['ok']);
    // No lines in a VOTable: the row alone.
    expect(errors(r.problems).map((p) => p.message.slice(0, 30))).toEqual(['row 1, column id: star id "emb', 'row 2, column id: star id "yyy']);
  });
});

describe('numbers: finite and physical', () => {
  it('1e400 (overflows to Infinity) and ±1e308 magnitudes are refused naming row, line and column', () => {
    const t = read(['id,V,V_err,parallax_mas', 'a,1e400,0.02,1', 'b,1e308,0.02,1', 'c,-1e308,0.02,1', 'd,9.5,1e400,1', 'e,9.5,0.02,1e400', 'f,9.5,0.02,-0.3'].join('\n'));
    expect(errors(t.problems).map((p) => p.message)).toEqual([
      'row 1 (file line 2), column V: V magnitude "1e400" is not a finite number (too large for a double)',
      'row 2 (file line 3), column V: V magnitude 1e+308 is outside -30…50 mag',
      'row 3 (file line 4), column V: V magnitude -1e+308 is outside -30…50 mag',
      'row 4 (file line 5), column V_err: V magnitude error "1e400" is not a finite number (too large for a double)',
      'row 5 (file line 6), column parallax_mas: parallax "1e400" is not a finite number (too large for a double)',
    ]);
    // A negative parallax is a measurement (Gaia publishes them); it is kept.
    expect(t.stars.map((s) => [s.id, s.parallaxMas])).toEqual([['f', -0.3]]);
  });

  it('magnitudes −30 and 50 are accepted, beyond is refused; upper limits alike', () => {
    const t = read(['id,V,V_err,B_ul', 'a,-30,0.1,', 'b,50,0.1,', 'c,-30.01,0.1,', 'd,50.5,0.1,', 'e,,,51'].join('\n'));
    expect(t.stars.map((s) => s.id)).toEqual(['a', 'b']);
    expect(errors(t.problems).map((p) => [p.row, p.column?.name, p.message.replace(/^.*: /, '')])).toEqual([
      [3, 'V', 'V magnitude -30.01 is outside -30…50 mag'],
      [4, 'V', 'V magnitude 50.5 is outside -30…50 mag'],
      [5, 'B_ul', 'B upper limit 51 is outside -30…50 mag'],
    ]);
  });

  it('errors must be ≥ 0 and finite, fluxes finite and positive, also as FITS/VOTable numbers', () => {
    const table: ColumnTable = {
      file: 'cat.fits',
      columns: ['id', 'W1_jy', 'W1_jy_err', 'V', 'V_err'],
      rows: [
        ['a', 0, 0.01, null, null],
        ['b', -1, 0.01, null, null],
        ['c', Infinity, 0.01, null, null],
        ['d', 1, -0.01, null, null],
        ['e', null, null, 9.5, Infinity],
        ['f', 1, 0, 9.5, 0],
      ],
    };
    const m = detectMapping(table.columns, table.rows, KEYS);
    const r = applyMapping(table, m, m.rules, { bandKeys: KEYS });
    expect(r.stars.map((s) => s.id)).toEqual(['f']);
    expect(errors(r.problems).map((p) => p.message)).toEqual([
      'row 1, column W1_jy: flux 0 Jy must be positive (give a negative detection as an upper limit)',
      'row 2, column W1_jy: flux -1 Jy must be positive (give a negative detection as an upper limit)',
      'row 3, column W1_jy: W1 flux "Infinity" is not a finite number (too large for a double)',
      'row 4, column W1_jy_err: negative error -0.01',
      'row 5, column V_err: V magnitude error "Infinity" is not a finite number (too large for a double)',
    ]);
  });

  it('a Gaia flux too small to be a star gives a magnitude outside the range and is refused', () => {
    const t = read('source_id,phot_g_mean_flux,phot_g_mean_flux_error\n1,1e-300,1e-301\n2,1000,1\n', 'gaia.csv');
    expect(t.stars.map((s) => s.id)).toEqual(['2']);
    expect(errors(t.problems)[0].message).toMatch(/^row 1 \(file line 2\), column phot_g_mean_flux: G from the Gaia flux 1e-300 e⁻\/s, 7\d\d\.\d+ is outside -30…50 mag$/);
  });
});

describe('text that is not what it seems', () => {
  it('a semicolon-separated file with decimal commas is read as numbers, not as one star with no values', () => {
    const t = read('id;V;V_err;Ks;Ks_err\nember-1;9,52;0,02;7,1;0,03\nember-2;10,05;0,03;8;0,04\n', 'europe.csv');
    expect(errors(t.problems)).toEqual([]);
    expect(t.stars).toEqual([
      { id: 'ember-1', row: 1, measurements: [{ bandKey: 'V', mag: 9.52, magErr: 0.02 }, { bandKey: 'Ks', mag: 7.1, magErr: 0.03 }] },
      { id: 'ember-2', row: 2, measurements: [{ bandKey: 'V', mag: 10.05, magErr: 0.03 }, { bandKey: 'Ks', mag: 8, magErr: 0.04 }] },
    ]);
  });

  it('the "sep=;" line a spreadsheet writes names the delimiter and is not the header', () => {
    const t = read('sep=;\r\nid;V;V_err\r\nember-1;9,5;0,02\r\n', 'sheet.csv');
    expect(t.table.columns).toEqual(['id', 'V', 'V_err']);
    expect(t.stars).toEqual([{ id: 'ember-1', row: 1, measurements: [{ bandKey: 'V', mag: 9.5, magErr: 0.02 }] }]);
    expect(t.table.lines).toEqual([3]);
  });

  it('a semicolon file mixing decimal commas and points is refused with a reason, naming a cell of each', () => {
    expect(refusal('id;V;V_err\nember-1;9,52;0.02\n', 'mixed.csv').message).toBe(
      'mixed.csv: semicolon-separated with both decimal commas (row 1 (file line 2), column V: "9,52") and decimal points (row 1 (file line 2), column V_err: "0.02"); which a number means cannot be told: save the file with one decimal separator (or as comma-separated CSV with decimal points)',
    );
  });

  it('a header with more semicolons than commas is semicolon-separated even when a name holds a comma', () => {
    const t = read('id;"V, mag";V_err\nember-1;9,5;0,02\n');
    expect(t.table.columns).toEqual(['id', 'V, mag', 'V_err']);
  });

  it('invalid UTF-8 in a CSV is refused with its byte offset and line', () => {
    const bytes = new Uint8Array([...enc('id,V,V_err\nst'), 0xe9, ...enc('r-1,9.5,0.02\n')]);
    expect(refusal(bytes).message).toMatch(/^stars\.csv: invalid UTF-8 at byte offset 13 \(line 2; bytes 0xE9 0x72 0x2D 0x31\); Starkiln reads text files as UTF-8/);
  });
});

// A VOTable of two stars around `body` rows (IVOA VOTable 1.4, TABLEDATA).
const vot = (rows: string, head = '<?xml version="1.0" encoding="UTF-8"?>\n', fieldAttr = '') =>
  `${head}<VOTABLE version="1.4"><RESOURCE><TABLE>\n<FIELD name="id" datatype="char" arraysize="*"${fieldAttr}/>\n<FIELD name="V" datatype="double"/>\n<FIELD name="V_err" datatype="double"/>\n<DATA><TABLEDATA>\n${rows}</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>\n`;
const ROWS = '<TR><TD>ember-1</TD><TD>9.5</TD><TD>0.02</TD></TR>\n<TR><TD>ember-2</TD><TD>9.6</TD><TD>0.02</TD></TR>\n';

function voError(input: string | Uint8Array): VoTableError {
  try {
    readVoTable(input, { source: 'h.vot' });
  } catch (err) {
    expect(err).toBeInstanceOf(VoTableError);
    return err as VoTableError;
  }
  throw new Error('read');
}

describe('hostile XML in a VOTable', () => {
  it('the plain table is read (the base of the hostile ones)', () => {
    expect(readVoTable(vot(ROWS)).rows).toEqual([['ember-1', '9.5', '0.02'], ['ember-2', '9.6', '0.02']]);
  });

  it('entity expansion ("billion laughs"): refused at the DOCTYPE, by line and column, as unsafe', () => {
    const laughs = `<?xml version="1.0"?>\n<!DOCTYPE lolz [\n<!ENTITY lol "lol">\n${Array.from({ length: 9 }, (_, i) => `<!ENTITY lol${i + 1} "${`&lol${i || ''};`.repeat(10)}">`).join('\n')}\n]>\n`;
    const err = voError(vot('<TR><TD>&lol9;</TD><TD>1</TD><TD>0.1</TD></TR>', laughs));
    expect(err.message).toMatch(/^h\.vot: line 2, column 1: the file declares a document type \(<!DOCTYPE …>\); Starkiln reads no DTDs/);
    expect(err.unsafe).toBe(true);
    const u = refusal(enc(vot('', laughs)), 'h.vot');
    expect(u.kind).toBe('unsafe');
  });

  it('an external entity is refused the same way, before anything could fetch it', () => {
    const err = voError(vot('<TR><TD>&xxe;</TD><TD>1</TD><TD>0.1</TD></TR>', '<?xml version="1.0"?>\n<!DOCTYPE v [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>\n'));
    expect(err.message).toMatch(/line 2, column 1: the file declares a document type/);
  });

  it('nesting deeper than 64 levels is refused naming the element and line', () => {
    const deep = `<?xml version="1.0"?>\n<VOTABLE>\n${'<RESOURCE>'.repeat(200)}\n${'</RESOURCE>'.repeat(200)}</VOTABLE>`;
    expect(voError(deep).message).toMatch(/^h\.vot: line 3, column \d+: elements nested more than 64 deep \(<RESOURCE> here\)/);
  });

  it('a 5 MB attribute value is refused naming the attribute, element and size', () => {
    expect(voError(vot(ROWS, undefined, ` ucd="${'x'.repeat(5_000_000)}"`)).message).toMatch(/^h\.vot: line 3, column \d+: an attribute value of 5000000 characters \(ucd of <FIELD>\), more than the 65536 read/);
  });

  it('a NUL character (not allowed in XML 1.0) is refused by line and column', () => {
    expect(voError(vot('<TR><TD>ember\u00001</TD><TD>1</TD><TD>0.1</TD></TR>')).message).toMatch(/^h\.vot: line 7, column 14: the character U\+0000 \(NUL\) is not allowed in XML/);
  });

  it('invalid UTF-8 in a VOTable is refused with its byte offset and line', () => {
    const text = vot(ROWS);
    const at = text.indexOf('ember-2');
    const bytes = enc(text);
    bytes[at] = 0xff;
    const err = voError(bytes);
    expect(err.message).toBe(`h.vot: invalid UTF-8 at byte offset ${at} (line 8; bytes 0xFF 0x6D 0x62 0x65); a VOTable without an encoding declaration must be UTF-8: save it as UTF-8`);
    expect(err.line).toBe(8);
  });

  it('a declared Latin-1 VOTable is read in that encoding; an unknown encoding is refused by name', () => {
    const latin = vot('<TR><TD>\u00e9toile-1</TD><TD>9.5</TD><TD>0.02</TD></TR>', '<?xml version="1.0" encoding="ISO-8859-1"?>\n');
    const bytes = Uint8Array.from(latin, (c) => c.charCodeAt(0));
    expect(readVoTable(bytes).rows).toEqual([['étoile-1', '9.5', '0.02']]);
    expect(voError(enc(vot(ROWS, '<?xml version="1.0" encoding="EBCDIC-X"?>\n'))).message).toMatch(/declares encoding "EBCDIC-X"/);
  });
});

describe('limits of every reader: size, rows, columns, cells, time', () => {
  const csv = (rows: number) => 'id,V,V_err\n' + Array.from({ length: rows }, (_, i) => `ember-${i + 1},9.5,0.02`).join('\n') + '\n';

  it('the defaults, and settings read from the environment (a bad one is named)', () => {
    expect(DEFAULT_INPUT_LIMITS).toEqual({ maxBytes: 209715200, maxRows: 2_000_000, maxColumns: 1000, maxCells: 10_000_000, maxSeconds: 120 });
    expect(limitsFromEnv({ INPUT_MAX_ROWS: '10', INPUT_MAX_SECONDS: '2.5', INPUT_MAX_CELLS: '' })).toEqual({ ...DEFAULT_INPUT_LIMITS, maxRows: 10, maxSeconds: 2.5 });
    expect(() => limitsFromEnv({ INPUT_MAX_ROWS: '-1', INPUT_MAX_COLUMNS: '1e3' })).toThrow('INPUT_MAX_ROWS must be a positive whole number, found "-1"; INPUT_MAX_COLUMNS must be a positive whole number, found "1e3"');
  });

  it('size: refused before reading, in every format', () => {
    for (const [file, bytes] of [['a.csv', enc(csv(3))], ['a.vot', enc(vot(ROWS))], ['a.fits', new Uint8Array(smallTable(3))]] as const) {
      const err = refusal(bytes, file, { limits: { maxBytes: 50 } });
      expect(err).toBeInstanceOf(InputLimitError);
      expect(err.message).toBe(`${file}: the file has ${bytes.length} bytes, more than the 50 a file may have; the limit is INPUT_MAX_BYTES = 50`);
    }
  });

  it('rows: CSV names the line, VOTable the line and column of the <TR>, FITS the NAXIS2', () => {
    expect(refusal(csv(5), 'a.csv', { limits: { maxRows: 3 } }).message).toBe('a.csv, line 5: more than 3 data rows; split the file; the limit is INPUT_MAX_ROWS = 3');
    expect(refusal(enc(vot(ROWS)), 'a.vot', { limits: { maxRows: 1 } }).message).toBe('a.vot, line 8, column 1: more than 1 data rows; split the file; the limit is INPUT_MAX_ROWS = 1');
    expect(refusal(new Uint8Array(smallTable(5)), 'a.fits', { limits: { maxRows: 4 } }).message).toBe('a.fits, HDU 1 (NAXIS2 = 5): more than 4 data rows; split the file; the limit is INPUT_MAX_ROWS = 4');
    // At the limit, the file is read.
    expect(read(csv(3), 'a.csv', { limits: { maxRows: 3 } }).stars).toHaveLength(3);
  });

  it('columns: 100 000 columns are refused at the header, not read', () => {
    const wide = 'id,' + Array.from({ length: 100_000 }, (_, i) => `c${i}`).join(',') + '\nember-1' + ',1'.repeat(100_000) + '\n';
    expect(refusal(wide).message).toBe('stars.csv, line 1: 100001 columns, more than 1000; keep the columns you need; the limit is INPUT_MAX_COLUMNS = 1000');
    const fields = Array.from({ length: 100_000 }, (_, i) => `<FIELD name="f${i}" datatype="double"/>`).join('');
    expect(refusal(enc(`<?xml version="1.0"?>\n<VOTABLE><RESOURCE><TABLE>${fields}</TABLE></RESOURCE></VOTABLE>`), 'w.vot').message).toMatch(/^w\.vot, line 2, column \d+: 1001 columns, more than 1000; .*INPUT_MAX_COLUMNS = 1000$/);
  });

  it('cells (the memory budget): rows × columns', () => {
    expect(refusal(csv(10), 'a.csv', { limits: { maxCells: 20 } }).message).toBe('a.csv, line 7: more than 20 cells (rows × columns) to hold in memory; split the file or keep fewer columns; the limit is INPUT_MAX_CELLS = 20');
    expect(refusal(new Uint8Array(smallTable(20)), 'a.fits', { limits: { maxCells: 30 } }).message).toMatch(/^a\.fits, HDU 1: more than 30 cells/);
    // A VOTable cell counts five times (its XML tree): 30 allows 6 cells, the file's 6 pass, 25 does not.
    expect(read(vot(ROWS), 'a.vot', { limits: { maxCells: 30 } }).stars).toHaveLength(2);
    expect(refusal(enc(vot(ROWS)), 'a.vot', { limits: { maxCells: 25 } }).message).toBe(
      'a.vot, line 8, column 33: more than 5 cells (rows × columns) to hold in memory (a cell of this format counts 5 times: reading it takes 5 times the memory); split the file or keep fewer columns; the limit is INPUT_MAX_CELLS = 25',
    );
  });

  it('time: a clock that has run past the limit stops each reader where it is (no real waiting)', () => {
    // Each reading of the clock advances it by a second; the readers look at it every 1024 steps.
    const clock = () => {
      let t = 0;
      return () => (t += 1000);
    };
    const big = csv(5000);
    const e1 = refusal(big, 'a.csv', { limits: { maxSeconds: 2 }, clock: clock() });
    expect(e1.message).toMatch(/^a\.csv, line \d+: reading took more than 2 s \(stopped here\); split the file or raise the limit; the limit is INPUT_MAX_SECONDS = 2 s$/);
    const rows = Array.from({ length: 3000 }, (_, i) => `<TR><TD>e-${i}</TD><TD>9</TD><TD>0.1</TD></TR>`).join('\n');
    expect(refusal(enc(vot(rows)), 'a.vot', { limits: { maxSeconds: 2 }, clock: clock() }).message).toMatch(/^a\.vot, line \d+, column \d+: reading took more than 2 s/);
    // FITS also looks at the clock once per HDU (a few readings before the rows).
    expect(refusal(new Uint8Array(smallTable(5000)), 'a.fits', { limits: { maxSeconds: 8 }, clock: clock() }).message).toMatch(/^a\.fits, HDU 1 (column "\w+" )?row \d+: reading took more than 8 s/);
    // With a clock that stands still the same files are read.
    expect(read(big, 'a.csv', { clock: () => 0 }).stars).toHaveLength(5000);
  });

  it('a FITS column of large arrays is not decoded into memory: its cells say how many values they hold', () => {
    const rows = 2;
    const repeat = 100_000;
    const body = Buffer.alloc(rows * (8 + repeat * 4));
    body.write('ember-01', 0, 'latin1');
    body.write('ember-02', 8 + repeat * 4, 'latin1');
    const bytes = Buffer.concat([primary(), bintableHeader(8 + repeat * 4, rows, [[card('TTYPE1', 'id'), card('TFORM1', '8A')], [card('TTYPE2', 'spectrum'), card('TFORM2', `${repeat}E`)]]), data(body)]);
    const r = readUpload(new Uint8Array(bytes), 's.fits');
    expect(r.format === 'fits-table' && r.table.rows).toEqual([['ember-01', '[100000 values]'], ['ember-02', '[100000 values]']]);
  });

  it('ReadBudget.tick reads the clock once per 1024 calls', () => {
    let reads = 0;
    const b = new ReadBudget('f', { maxSeconds: 1 }, () => (reads++, 0));
    for (let i = 0; i < 4096; i++) b.tick(() => 'here');
    expect(reads).toBe(1 + 4);
  });
});
