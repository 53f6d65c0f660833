// Canonical photometry tables (product.md, "Interfaces"): wide CSV/TSV (one row per star) and long
// CSV/TSV (one row per star and band) → stars with their measurements, plus every problem found,
// each naming file, row and column. A star with any error is left out whole (nothing half-read);
// the other stars carry on.
import type { Measurement } from '../types';
import { DelimitedError, decodeText, detectDelimiter, scanDelimited, type Delimiter } from './delimited';

export interface StarInput {
  id: string;
  raDeg?: number;
  decDeg?: number;
  parallaxMas?: number;
  parallaxErrMas?: number;
  /** Known A_V for this star (column `av`). */
  avMag?: number;
  measurements: Measurement[];
  /** 1-based data row (wide) or first data row (long) the star came from. */
  row: number;
  /** 1-based line of the file. */
  line: number;
}

export type ProblemSeverity = 'error' | 'warning';

export interface TableProblem {
  file: string;
  /** 1-based data row as a person counts it (the header is not counted); 0 for the header or the whole file. */
  row: number;
  /** 1-based line of the file (comments and header included), 0 when not tied to a line. */
  line: number;
  /** Column name and 1-based number, when the problem sits in one column. */
  column?: { name: string; number: number };
  severity: ProblemSeverity;
  message: string;
}

export type TableFormat = 'wide' | 'long';

export interface PhotometryTable {
  format: TableFormat;
  delimiter: Delimiter | null;
  stars: StarInput[];
  problems: TableProblem[];
  /** Data rows read (wide: stars; long: measurements). */
  rowCount: number;
  /** Data rows left out because of an error. */
  rejectedRows: number;
  /** Band keys that have at least one column. */
  bandKeys: string[];
  /** Leading '#' lines of the file. */
  comments: string[];
}

export interface ReadPhotometryOptions {
  /** File name used in problems. */
  file?: string;
  /** Case-sensitive band keys of the band library (`starterBandLibrary()` keys). */
  bandKeys: readonly string[];
  /** Force a format; default: long when the header has `band`, else wide. */
  format?: TableFormat;
  delimiter?: Delimiter;
  /**
   * Renames columns to canonical names before reading ({ j_m: 'J', j_msigcom: 'J_err' }); a value of
   * '-' drops the column. Issue 4's auto-detection of catalogue names fills this in.
   */
  columnMap?: Readonly<Record<string, string>>;
}

/** Formats a problem the way compilers do, so editors can jump to it: `file:line:column: message`. */
export function formatProblem(p: TableProblem): string {
  const where = `${p.file}:${p.line}${p.column ? `:${p.column.number}` : ''}`;
  return `${where}: ${p.severity === 'warning' ? 'warning: ' : ''}${p.message}`;
}

/** Cells that mean "no value" besides the empty cell: common spellings in exported tables. */
const MISSING = new Set(['', 'nan', 'NaN', 'NAN', 'NA', 'N/A', 'null', 'NULL', 'None', '--']);

/** undefined = no value; NaN = not a number (an error for the caller to report). */
function readNumber(cell: string | undefined): number | undefined {
  if (cell === undefined || cell.length === 0) return undefined;
  const c0 = cell.charCodeAt(0);
  const x = Number(cell);
  if (Number.isFinite(x)) {
    // Number() also takes blanks (' ' → 0) and hex/binary/octal literals ('0x10'): refuse those.
    if (c0 <= 32) {
      const t = cell.trim();
      if (t.length === 0) return undefined;
      return t.length > 1 && t.charCodeAt(0) === 48 && t.charCodeAt(1) > 57 && t.charCodeAt(1) !== 46 && (t.charCodeAt(1) | 32) !== 101 ? NaN : x;
    }
    if (c0 === 48 && cell.length > 1) {
      const c1 = cell.charCodeAt(1) | 32;
      if (c1 === 120 || c1 === 98 || c1 === 111) return NaN;
    }
    return x;
  }
  return MISSING.has(cell.trim()) ? undefined : NaN;
}

function levenshtein(a: string, b: string): number {
  const dp = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let prev = dp[0];
    dp[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const tmp = dp[j];
      dp[j] = Math.min(dp[j] + 1, dp[j - 1] + 1, prev + (a[i - 1] === b[j - 1] ? 0 : 1));
      prev = tmp;
    }
  }
  return dp[b.length];
}

/** The band key a mistyped one most likely meant: same letters in another case, a 'mag' decoration, or one edit away. */
export function closestBandKey(name: string, bandKeys: readonly string[]): string | undefined {
  return bandKeyGuess(name, bandKeys)?.key;
}

/** `sure` when only case or a magnitude decoration differs (then it is surely a band column). */
function bandKeyGuess(name: string, bandKeys: readonly string[]): { key: string; sure: boolean } | undefined {
  const lower = name.toLowerCase();
  const exactCase = bandKeys.filter((k) => k.toLowerCase() === lower);
  if (exactCase.length > 0) return { key: exactCase.join("' or '"), sure: true };
  const stripped = name.replace(/^(e_|err_|sig_)/i, '').replace(/(mag|_mag|_m)$/i, '');
  if (stripped !== name && stripped.length > 0) {
    const hit = bandKeys.find((k) => k === stripped) ?? bandKeys.find((k) => k.toLowerCase() === stripped.toLowerCase());
    if (hit) return { key: hit, sure: true };
  }
  if (name.length >= 2) {
    const near = bandKeys.filter((k) => k.length >= 2 && levenshtein(k.toLowerCase(), lower) === 1);
    if (near.length === 1) return { key: near[0], sure: false };
  }
  return undefined;
}

const STAR_COLUMNS = { id: 'id', ra: 'raDeg', dec: 'decDeg', parallax_mas: 'parallaxMas', parallax_err_mas: 'parallaxErrMas', av: 'avMag' } as const;
type StarColumn = keyof typeof STAR_COLUMNS;
const SUFFIXES = ['_jy_err', '_jy_ul', '_err', '_jy', '_ul'] as const;
type Quantity = 'mag' | 'mag_err' | 'jy' | 'jy_err' | 'ul' | 'jy_ul';
const SUFFIX_QUANTITY: Record<string, Quantity> = { '': 'mag', _err: 'mag_err', _jy: 'jy', _jy_err: 'jy_err', _ul: 'ul', _jy_ul: 'jy_ul' };

interface BandColumns {
  key: string;
  mag?: number;
  mag_err?: number;
  jy?: number;
  jy_err?: number;
  ul?: number;
  jy_ul?: number;
}

/** Reads a canonical wide or long photometry table from bytes (CSV or TSV, UTF-8 or Latin-1). */
export function readPhotometryTable(input: Uint8Array | string, options: ReadPhotometryOptions): PhotometryTable {
  const file = options.file ?? 'table';
  const empty = (message: string, delimiter: Delimiter | null = null, comments: string[] = []): PhotometryTable => ({
    format: options.format ?? 'wide',
    delimiter,
    stars: [],
    problems: [{ file, row: 0, line: 0, severity: 'error', message }],
    rowCount: 0,
    rejectedRows: 0,
    bandKeys: [],
    comments,
  });
  let table: RowStream;
  try {
    const text = typeof input === 'string' ? input : decodeText(input, file);
    table = openRows(text, options.delimiter, file);
    if (table.header.length === 0) return empty('the file is empty (no header line with column names)', null, table.comments);
    return readRows(table, file, options);
  } catch (e) {
    if (e instanceof DelimitedError) {
      const out = empty(e.message.startsWith(`${file}:`) ? e.message.slice(e.message.indexOf(': ') + 2) : e.message);
      out.problems[0].line = e.line ?? 0;
      return out;
    }
    throw e;
  }
}

function readRows(table: RowStream, file: string, options: ReadPhotometryOptions): PhotometryTable {
  const map = options.columnMap;
  const canonical = map ? table.header.map((h) => map[h] ?? h) : table.header;
  const format = options.format ?? (canonical.includes('band') ? 'long' : 'wide');
  return format === 'long' ? readLong(table, file, options.bandKeys, map) : readWide(table, file, options.bandKeys, map);
}

/**
 * Reads photometry from any table already split into cells (a FITS table, a VOTable …). `line` of
 * each row is what problems show as their position (for FITS: the 1-based table row).
 */
export function readPhotometryRows(table: RowStream, options: ReadPhotometryOptions): PhotometryTable {
  const file = options.file ?? 'table';
  if (table.header.length === 0) {
    return { format: options.format ?? 'wide', delimiter: null, stars: [], problems: [{ file, row: 0, line: 0, severity: 'error', message: 'the table has no columns' }], rowCount: 0, rejectedRows: 0, bandKeys: [], comments: [] };
  }
  return readRows(table, file, options);
}

/** Header first, then the data rows streamed one by one (see scanDelimited). */
export interface RowStream {
  header: string[];
  headerLine: number;
  delimiter: Delimiter | null;
  comments: string[];
  /** Calls cb for each data row (0-based index r = data row r + 1); returns the number of rows. */
  forEach(cb: (cells: string[], line: number, r: number) => void): number;
}

const STOP = Symbol('stop');

function openRows(text: string, delimiter: Delimiter | undefined, source: string): RowStream {
  let header: string[] = [];
  let headerLine = 0;
  let info: { delimiter: Delimiter; comments: string[] } = { delimiter: delimiter ?? ',', comments: [] };
  try {
    info = scanDelimited(text, { delimiter, source }, (fields, line) => {
      header = fields.map((h) => h.trim());
      headerLine = line;
      throw STOP;
    });
  } catch (e) {
    if (e !== STOP) throw e;
    // The comments were collected before the header; read them again without the row scan.
    info = commentsAndDelimiter(text, delimiter);
  }
  return {
    header,
    headerLine,
    delimiter: info.delimiter,
    comments: info.comments,
    forEach(cb) {
      let r = -1;
      scanDelimited(text, { delimiter: info.delimiter, source }, (fields, line) => {
        if (r >= 0) cb(fields, line, r);
        r++;
      });
      return Math.max(r, 0);
    },
  };
}

function commentsAndDelimiter(text: string, delimiter: Delimiter | undefined): { delimiter: Delimiter; comments: string[] } {
  const comments: string[] = [];
  for (const raw of text.slice(0, 1 << 20).split(/\r\n|\n|\r/)) {
    const lineText = raw.replace(/^\ufeff/, '');
    if (lineText.startsWith('#')) comments.push(lineText.slice(1).replace(/^ /, ''));
    else if (lineText.trim() !== '') return { delimiter: delimiter ?? detectDelimiter(lineText), comments };
  }
  return { delimiter: delimiter ?? ',', comments };
}

function starColumnOf(name: string): StarColumn | undefined {
  const lower = name.toLowerCase();
  return lower in STAR_COLUMNS ? (lower as StarColumn) : undefined;
}

function readWide(table: RowStream, file: string, bandKeys: readonly string[], columnMap?: Readonly<Record<string, string>>): PhotometryTable {
  const problems: TableProblem[] = [];
  const keySet = new Set(bandKeys);
  const header = table.header;
  // Columns renamed to canonical names (e.g. a catalogue's own names); '' or '-' drops a column.
  const names = header.map((h) => (columnMap && Object.prototype.hasOwnProperty.call(columnMap, h) ? columnMap[h] : h));
  const ignored: string[] = [];
  const starCols: Partial<Record<StarColumn, number>> = {};
  const bands = new Map<string, BandColumns>();
  const headerProblem = (col: number, severity: ProblemSeverity, message: string) =>
    problems.push({ file, row: 0, line: table.headerLine, column: { name: header[col], number: col + 1 }, severity, message });
  const seenNames = new Map<string, number>();
  names.forEach((name, col) => {
    if (name === '-' || (name === '' && header[col] !== '')) return;
    if (seenNames.has(name)) {
      headerProblem(col, 'error', `column "${name}" appears twice (columns ${seenNames.get(name)! + 1} and ${col + 1}); only the first is read`);
      return;
    }
    seenNames.set(name, col);
    const star = starColumnOf(name);
    if (star) {
      starCols[star] = col;
      return;
    }
    let suffix = '';
    let key = name;
    if (!keySet.has(name)) {
      for (const s of SUFFIXES) {
        if (name.endsWith(s) && keySet.has(name.slice(0, -s.length))) {
          suffix = s;
          key = name.slice(0, -s.length);
          break;
        }
      }
    }
    if (!keySet.has(key)) {
      if (name === '') {
        headerProblem(col, 'warning', 'column has no name in the header and was ignored');
        return;
      }
      const base = SUFFIXES.reduce((b, s) => (b.endsWith(s) ? b.slice(0, -s.length) : b), name);
      const guess = bandKeyGuess(base, bandKeys);
      if (guess) {
        const whole = guess.key.includes("'") ? guess.key : name.replace(base, guess.key);
        // A case or decoration slip is surely a band column: an error, since its data would be lost.
        // One edit away may be a coincidence ('hd' vs 'Hp'): a warning.
        headerProblem(col, guess.sure ? 'error' : 'warning', `unknown band column "${name}" (band keys are case-sensitive); did you mean '${whole}'? The column was not read`);
      } else {
        ignored.push(name);
      }
      return;
    }
    const entry = bands.get(key) ?? { key };
    entry[SUFFIX_QUANTITY[suffix]] = col;
    bands.set(key, entry);
  });
  if (ignored.length > 0) {
    const list = ignored.length > 30 ? `${ignored.slice(0, 30).join(', ')} … (${ignored.length - 30} more)` : ignored.join(', ');
    problems.push({
      file,
      row: 0,
      line: table.headerLine,
      severity: 'warning',
      message: `${ignored.length} column${ignored.length === 1 ? ' is' : 's are'} neither a star column (${Object.keys(STAR_COLUMNS).join(', ')}) nor a band column (<band>, <band>_err, <band>_jy, <band>_jy_err, <band>_ul, <band>_jy_ul) and ${ignored.length === 1 ? 'was' : 'were'} ignored: ${list}`,
    });
  }
  if (starCols.id === undefined) {
    problems.push({ file, row: 0, line: table.headerLine, severity: 'error', message: `the header has no "id" column, which the wide format requires (columns found: ${header.join(', ')})` });
    const count = table.forEach(() => undefined);
    return { format: 'wide', delimiter: table.delimiter, stars: [], problems, rowCount: count, rejectedRows: count, bandKeys: [...bands.keys()], comments: table.comments };
  }
  for (const b of bands.values()) {
    const name = (q: string) => `${b.key}${q}`;
    if (b.mag_err !== undefined && b.mag === undefined && b.ul === undefined) headerProblem(b.mag_err, 'warning', `"${name('_err')}" has no "${b.key}" column beside it; it was ignored`);
    if (b.jy_err !== undefined && b.jy === undefined) headerProblem(b.jy_err, 'warning', `"${name('_jy_err')}" has no "${b.key}_jy" column beside it; it was ignored`);
  }

  const idCol = starCols.id;
  const bandList = [...bands.values()].sort((a, b) => bandKeys.indexOf(a.key) - bandKeys.indexOf(b.key));
  const stars: StarInput[] = [];
  const firstRowOfId = new Map<string, number>();
  let rejected = 0;
  const ncol = header.length;
  // One state object and two helpers for all rows: closures made per row cost more than the parsing.
  const cur = { cells: [] as string[], row: 0, line: 0, bad: false };
  const problem = (col: number | undefined, message: string, severity: ProblemSeverity = 'error') => {
    problems.push({ file, row: cur.row, line: cur.line, column: col === undefined ? undefined : { name: header[col], number: col + 1 }, severity, message: `data row ${cur.row}${col === undefined ? '' : `, column ${header[col]}`}: ${message}` });
    if (severity === 'error') cur.bad = true;
  };
  const num = (col: number | undefined, what: string): number | undefined => {
    if (col === undefined) return undefined;
    const x = readNumber(cur.cells[col]);
    if (x !== undefined && Number.isNaN(x)) {
      problem(col, `${what} "${cur.cells[col].trim()}" is not a number`);
      return undefined;
    }
    return x;
  };
  const rowCount = table.forEach((cells, line, r) => {
    const row = r + 1;
    cur.cells = cells;
    cur.row = row;
    cur.line = line;
    cur.bad = false;
    if (cells.length !== ncol) {
      problem(undefined, `has ${cells.length} field${cells.length === 1 ? '' : 's'} but the header has ${ncol}; the row was left out (a missing or extra delimiter, or an unquoted "${table.delimiter === '\t' ? '\\t' : table.delimiter}" inside a value?)`);
      rejected++;
      return;
    }
    const id = cells[idCol].trim();
    if (id === '') {
      problem(idCol, 'missing id; the row was left out');
      rejected++;
      return;
    }
    const prior = firstRowOfId.get(id);
    if (prior !== undefined) {
      problem(idCol, `duplicate id "${id}" (first seen in row ${prior}); this row was left out`);
      rejected++;
      return;
    }
    firstRowOfId.set(id, row);
    const star: StarInput = { id, measurements: [], row, line };
    const ra = num(starCols.ra, 'right ascension');
    if (ra !== undefined && (ra < 0 || ra >= 360)) problem(starCols.ra, `right ascension ${ra} is outside 0 ≤ ra < 360 degrees`);
    const dec = num(starCols.dec, 'declination');
    if (dec !== undefined && (dec < -90 || dec > 90)) problem(starCols.dec, `declination ${dec} is outside −90…90 degrees`);
    const plx = num(starCols.parallax_mas, 'parallax');
    const plxErr = num(starCols.parallax_err_mas, 'parallax error');
    if (plxErr !== undefined && plxErr < 0) problem(starCols.parallax_err_mas, `parallax error ${plxErr} mas is negative`);
    const av = num(starCols.av, 'A_V');
    if (av !== undefined && av < 0) problem(starCols.av, `A_V ${av} mag is negative`);
    star.raDeg = ra;
    star.decDeg = dec;
    star.parallaxMas = plx;
    star.parallaxErrMas = plxErr;
    star.avMag = av;
    for (const b of bandList) {
      const mag = num(b.mag, 'magnitude');
      const magErr = num(b.mag_err, 'magnitude error');
      const jy = num(b.jy, 'flux');
      const jyErr = num(b.jy_err, 'flux error');
      const ul = num(b.ul, 'upper-limit magnitude');
      const jyUl = num(b.jy_ul, 'upper-limit flux');
      if (magErr !== undefined && magErr < 0) problem(b.mag_err, `negative error ${magErr} mag`);
      if (jyErr !== undefined && jyErr < 0) problem(b.jy_err, `negative error ${jyErr} Jy`);
      const given = (mag === undefined ? 0 : 1) + (jy === undefined ? 0 : 1) + (ul === undefined ? 0 : 1) + (jyUl === undefined ? 0 : 1);
      if (given > 1) {
        problem(b.mag ?? b.jy ?? b.ul ?? b.jy_ul, `band ${b.key} has more than one of ${b.key}, ${b.key}_jy, ${b.key}_ul, ${b.key}_jy_ul filled; keep one`);
        continue;
      }
      if (mag !== undefined) {
        if (magErr === undefined) problem(b.mag, `band ${b.key} has a magnitude but no error in ${b.key}_err; the measurement was not used`, 'warning');
        else star.measurements.push({ bandKey: b.key, mag, magErr });
      } else if (jy !== undefined) {
        if (jyErr === undefined) problem(b.jy, `band ${b.key} has a flux but no error in ${b.key}_jy_err; the measurement was not used`, 'warning');
        else star.measurements.push({ bandKey: b.key, fnuJy: jy, fnuErrJy: jyErr });
      } else if (ul !== undefined) {
        star.measurements.push({ bandKey: b.key, mag: ul, upperLimit: true });
      } else if (jyUl !== undefined) {
        if (jyUl <= 0) problem(b.jy_ul, `upper-limit flux ${jyUl} Jy must be positive`);
        else star.measurements.push({ bandKey: b.key, fnuJy: jyUl, upperLimit: true });
      }
    }
    if (cur.bad) {
      rejected++;
      return;
    }
    stars.push(star);
  });
  return { format: 'wide', delimiter: table.delimiter, stars, problems, rowCount, rejectedRows: rejected, bandKeys: bandList.map((b) => b.key), comments: table.comments };
}

const LONG_COLUMNS = ['id', 'band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul'] as const;

function readLong(table: RowStream, file: string, bandKeys: readonly string[], columnMap?: Readonly<Record<string, string>>): PhotometryTable {
  const problems: TableProblem[] = [];
  const keySet = new Set(bandKeys);
  const header = table.header;
  const col: Record<string, number | undefined> = {};
  const star: Partial<Record<StarColumn, number>> = {};
  header.forEach((original, i) => {
    const name = columnMap && Object.prototype.hasOwnProperty.call(columnMap, original) ? columnMap[original] : original;
    if (name === '-' || (name === '' && original !== '')) return;
    const lower = name.toLowerCase();
    if ((LONG_COLUMNS as readonly string[]).includes(lower)) col[lower] ??= i;
    else if (starColumnOf(name)) star[starColumnOf(name)!] ??= i;
    else problems.push({ file, row: 0, line: table.headerLine, column: { name, number: i + 1 }, severity: 'warning', message: `column "${name}" is not part of the long format (${LONG_COLUMNS.join(', ')}, plus ra, dec, parallax_mas, parallax_err_mas, av); it was ignored` });
  });
  const missing = ['id', 'band'].filter((c) => col[c] === undefined);
  if (col.mag === undefined && col.jy === undefined) missing.push('mag or jy');
  if (missing.length > 0) {
    problems.push({ file, row: 0, line: table.headerLine, severity: 'error', message: `the long format needs the column${missing.length > 1 ? 's' : ''} ${missing.join(', ')} (columns found: ${header.join(', ')})` });
    const count = table.forEach(() => undefined);
    return { format: 'long', delimiter: table.delimiter, stars: [], problems, rowCount: count, rejectedRows: count, bandKeys: [], comments: table.comments };
  }
  const byId = new Map<string, StarInput & { bad: boolean; rows: number; bandRow: Map<string, number> }>();
  const usedBands = new Set<string>();
  let rejected = 0;
  const ncol = header.length;
  const rowCount = table.forEach((cells, line, r) => {
    const row = r + 1;
    let bad = false;
    const problem = (c: number | undefined, message: string, severity: ProblemSeverity = 'error') => {
      problems.push({ file, row, line, column: c === undefined ? undefined : { name: header[c], number: c + 1 }, severity, message: `data row ${row}${c === undefined ? '' : `, column ${header[c]}`}: ${message}` });
      if (severity === 'error') bad = true;
    };
    if (cells.length !== ncol) {
      problem(undefined, `has ${cells.length} field${cells.length === 1 ? '' : 's'} but the header has ${ncol}; the row was left out`);
      rejected++;
      return;
    }
    const id = cells[col.id!].trim();
    if (id === '') {
      problem(col.id, 'missing id; the row was left out');
      rejected++;
      return;
    }
    let s = byId.get(id);
    if (!s) {
      s = { id, measurements: [], row, line, bad: false, rows: 0, bandRow: new Map() };
      byId.set(id, s);
    }
    s.rows++;
    const num = (c: number | undefined, what: string): number | undefined => {
      if (c === undefined) return undefined;
      const x = readNumber(cells[c]);
      if (x !== undefined && Number.isNaN(x)) {
        problem(c, `${what} "${cells[c].trim()}" is not a number`);
        return undefined;
      }
      return x;
    };
    const band = cells[col.band!].trim();
    if (!keySet.has(band)) {
      const guess = band === '' ? undefined : closestBandKey(band, bandKeys);
      problem(col.band, band === '' ? 'missing band' : `unknown band "${band}" (band keys are case-sensitive)${guess ? `; did you mean '${guess}'?` : `; known bands: ${bandKeys.join(' ')}`}`);
    } else {
      const prior = s.bandRow.get(band);
      if (prior !== undefined) problem(col.band, `star "${id}" already has band ${band} in row ${prior}`);
      else s.bandRow.set(band, row);
    }
    const mag = num(col.mag, 'magnitude');
    const magErr = num(col.mag_err, 'magnitude error');
    const jy = num(col.jy, 'flux');
    const jyErr = num(col.jy_err, 'flux error');
    const ulCell = col.ul === undefined ? '' : cells[col.ul].trim().toLowerCase();
    const ul = ulCell === '1' || ulCell === 'true' || ulCell === 't' || ulCell === 'yes';
    if (!['', '0', '1', 'true', 'false', 't', 'f', 'yes', 'no'].includes(ulCell)) problem(col.ul, `ul must be 1 (upper limit) or 0/empty, found "${cells[col.ul!].trim()}"`);
    if (magErr !== undefined && magErr < 0) problem(col.mag_err, `negative error ${magErr} mag`);
    if (jyErr !== undefined && jyErr < 0) problem(col.jy_err, `negative error ${jyErr} Jy`);
    if (mag !== undefined && jy !== undefined) problem(col.mag, 'both mag and jy are filled; one row holds one of them');
    else if (mag === undefined && jy === undefined) problem(col.mag ?? col.jy, 'neither mag nor jy is filled');
    for (const [k, field] of Object.entries(star) as [StarColumn, number][]) {
      if (k === 'id') continue;
      const v = num(field, k);
      if (v === undefined) continue;
      const prop = STAR_COLUMNS[k] as 'raDeg' | 'decDeg' | 'parallaxMas' | 'parallaxErrMas' | 'avMag';
      if (s[prop] !== undefined && s[prop] !== v) problem(field, `${k} ${v} differs from ${s[prop]} given for star "${id}" in an earlier row`);
      else s[prop] = v;
    }
    if (!bad && keySet.has(band)) {
      usedBands.add(band);
      if (mag !== undefined) {
        if (ul) s.measurements.push({ bandKey: band, mag, upperLimit: true });
        else if (magErr === undefined) problem(col.mag_err ?? col.mag, `band ${band} has a magnitude but no mag_err; the measurement was not used`, 'warning');
        else s.measurements.push({ bandKey: band, mag, magErr });
      } else if (jy !== undefined) {
        if (ul) s.measurements.push({ bandKey: band, fnuJy: jy, upperLimit: true });
        else if (jyErr === undefined) problem(col.jy_err ?? col.jy, `band ${band} has a flux but no jy_err; the measurement was not used`, 'warning');
        else s.measurements.push({ bandKey: band, fnuJy: jy, fnuErrJy: jyErr });
      }
    }
    if (bad) s.bad = true;
  });
  const stars: StarInput[] = [];
  for (const s of byId.values()) {
    if (s.bad) {
      rejected += s.rows;
      problems.push({ file, row: s.row, line: s.line, severity: 'error', message: `star "${s.id}" was left out because of the errors in its rows above` });
      continue;
    }
    stars.push({ id: s.id, raDeg: s.raDeg, decDeg: s.decDeg, parallaxMas: s.parallaxMas, parallaxErrMas: s.parallaxErrMas, avMag: s.avMag, measurements: s.measurements, row: s.row, line: s.line });
  }
  const bandList = bandKeys.filter((k) => usedBands.has(k));
  return { format: 'long', delimiter: table.delimiter, stars, problems, rowCount, rejectedRows: rejected, bandKeys: bandList, comments: table.comments };
}
