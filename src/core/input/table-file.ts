// What an input file is, decided from its bytes (never from its name or the browser's type),
// and its table in the one shape the column mapping reads (core/input/mapping ColumnTable). The web
// intake and the `starkiln fit` command both read files through here, so they accept the same
// formats and say the same things about a file they cannot read.
import type { ColumnTable, TableCell } from './mapping';
import { DelimitedError, decodeText, parseDelimited } from './delimited';
import { FitsError, readFits, readFitsImageHeader, readFitsTable, type FitsCell, type FitsValue } from './fits-file';
import { MAG_RANGE } from './apply-mapping';
import { readVoTable, VoTableError } from './votable';
import { ReadBudget, shownText, UnreadableFile, type Clock, type InputLimits } from './limits';

export { InputLimitError, UnreadableFile } from './limits';

export const DETECTED_FORMATS = ['csv', 'tsv', 'votable', 'fits-table', 'fits-image'] as const;
export type DetectedFormat = (typeof DETECTED_FORMATS)[number];

export const FORMAT_LABELS: Record<DetectedFormat, string> = {
  csv: 'CSV text',
  tsv: 'tab-separated text',
  votable: 'VOTable',
  'fits-table': 'FITS binary table',
  'fits-image': 'FITS image',
};

/** Per-observation metadata of a FITS image (docs/science.md, "Interfaces"). */
export interface ImageObservation {
  object?: string;
  filter?: string;
  exptimeS?: number;
  dateObs?: string;
  airmass?: number;
  raDeg?: number;
  decDeg?: number;
  zeroPointMag?: number;
  zeroPointErrMag?: number;
  zeroPointKeyword?: string;
  /** A magnitude measured on the image when the header carries one (MAG/MAGERR …). */
  mag?: number;
  magErr?: number;
  magKeyword?: string;
}

export type ReadUpload =
  | { format: Exclude<DetectedFormat, 'fits-image'>; table: ColumnTable }
  | { format: 'fits-image'; observation: ImageObservation; warnings: string[] };

function startsWith(bytes: Uint8Array, text: string, at = 0): boolean {
  if (bytes.length < at + text.length) return false;
  for (let i = 0; i < text.length; i++) if (bytes[at + i] !== text.charCodeAt(i)) return false;
  return true;
}

/** Offset of the first non-blank byte after an optional UTF-8 byte-order mark. */
function firstContent(bytes: Uint8Array): number {
  let i = startsWith(bytes, '\ufeff'.length === 1 ? '\u00ef\u00bb\u00bf' : '') ? 3 : 0;
  while (i < bytes.length && (bytes[i] === 0x20 || bytes[i] === 0x09 || bytes[i] === 0x0a || bytes[i] === 0x0d)) i++;
  return i;
}

/** Magic bytes first: 'SIMPLE  =' is FITS (FITS Standard 4.0, section 4.4.1.1), '<' starts XML. */
export function sniffFormat(bytes: Uint8Array): 'fits' | 'xml' | 'text' | 'empty' {
  if (bytes.length === 0) return 'empty';
  if (startsWith(bytes, 'SIMPLE  =')) return 'fits';
  const i = firstContent(bytes);
  if (i >= bytes.length) return 'empty';
  if (bytes[i] === 0x3c /* < */) return 'xml';
  return 'text';
}

function fitsCell(v: FitsCell): TableCell {
  if (v === null || typeof v === 'string' || typeof v === 'number' || typeof v === 'boolean') return v;
  // 64-bit integers stay exact: Gaia source_id values pass 2^53, and rounding them would merge stars.
  if (typeof v === 'bigint') return v;
  // Arrays and complex numbers are not photometry; the mapping reports them as non-numbers.
  return Array.isArray(v) ? `[${v.length} values]` : `(${v.re}, ${v.im})`;
}

const MAG_KEYWORDS: [string, string[]][] = [
  ['MAG', ['MAGERR', 'MAG_ERR', 'EMAG']],
  ['OBJMAG', ['OBJMAGER', 'OBJMAGERR']],
  ['MAGNITUD', ['MAGERR']],
];

function readFitsUpload(bytes: Uint8Array, file: string, hdu: number | string | undefined, budget: ReadBudget): ReadUpload {
  let hdus;
  try {
    hdus = readFits(bytes, { source: file, budget }).hdus;
  } catch (err) {
    if (!(err instanceof FitsError)) throw err;
    // A header-only image (data cut off) still gives its observation metadata; a cut binary table
    // is a truncated table, never an image.
    try {
      const partial = readFits(bytes, { source: file, allowTruncatedData: true });
      const meta = readFitsImageHeader(bytes, { source: file });
      if (!partial.hdus.some((h) => h.kind === 'bintable') && (meta.filter || meta.object)) return imageUpload(meta, file);
    } catch {
      // fall through to the table error, which says what is wrong
    }
    throw new UnreadableFile(`${file}: not a readable FITS file: ${stripSource(err.message, file)}`);
  }
  if (hdus.some((h) => h.kind === 'bintable')) {
    try {
      const t = readFitsTable(bytes, { source: file, hdu, budget });
      const columns = t.columns.map((c) => c.name);
      const where = () => `HDU ${t.hdu.index}`;
      budget.columns(columns.length, where);
      budget.rows(t.rowCount, () => `HDU ${t.hdu.index} (NAXIS2 = ${t.rowCount})`);
      budget.cells(t.rowCount * columns.length, where);
      // Array cells are not photometry: they become "[n values]" without decoding their elements,
      // so a column of large arrays costs no memory.
      const data = columns.map((name) =>
        t.isArrayColumn(name) ? Array.from({ length: t.rowCount }, (_, r) => `[${t.elementCount(name, r)} values]`) : t.getColumn(name),
      );
      const rows: TableCell[][] = [];
      for (let r = 0; r < t.rowCount; r++) {
        rows.push(data.map((col) => fitsCell(col[r])));
        budget.tick(() => `HDU ${t.hdu.index} row ${r + 1}`);
      }
      return { format: 'fits-table', table: { file, columns, units: t.columns.map((c) => c.unit), rows } };
    } catch (err) {
      if (err instanceof FitsError) throw new UnreadableFile(`${file}: the FITS table cannot be read: ${stripSource(err.message, file)}`);
      throw err;
    }
  }
  const image = hdus.find((h) => (h.kind === 'primary' || h.kind === 'image') && h.dataBytes > 0) ?? hdus[0];
  if (!image || hdus.every((h) => h.kind !== 'primary' && h.kind !== 'image')) {
    throw new UnreadableFile(`${file}: the FITS file holds no binary table and no image (${hdus.map((h) => h.kind).join(', ')})`);
  }
  try {
    return imageUpload(readFitsImageHeader(bytes, { source: file }), file);
  } catch (err) {
    if (err instanceof FitsError) throw new UnreadableFile(`${file}: the FITS image header cannot be read: ${stripSource(err.message, file)}`);
    throw err;
  }
}

function imageUpload(meta: ReturnType<typeof readFitsImageHeader>, file: string): ReadUpload {
  const observation: ImageObservation = {
    object: meta.object,
    filter: meta.filter,
    exptimeS: meta.exptimeS,
    dateObs: meta.dateObs,
    airmass: meta.airmass,
    raDeg: meta.raDeg,
    decDeg: meta.decDeg,
    zeroPointMag: meta.zeroPointMag,
    zeroPointErrMag: meta.zeroPointErrMag,
    zeroPointKeyword: meta.zeroPointKeyword,
  };
  // A magnitude keyword that is present must hold a number: an empty or undefined value, or text,
  // is refused naming the keyword rather than skipped (it would be offered or stored as no value).
  const keyword = (k: string) => {
    const v = meta.header.get(k);
    return v === undefined ? meta.primaryHeader.get(k) : v;
  };
  const refuse = (k: string, v: FitsValue, what: string): never => {
    const said = v === null ? `${k} has no value` : typeof v === 'string' ? (v.trim() === '' ? `${k} = '' is empty` : `${k} = '${shownText(v.trim())}' is not a number`) : `${k} = ${String(v)} is not a number`;
    throw new UnreadableFile(`${file}: the header's ${said}, so it cannot be ${what}; correct or remove the keyword and upload the file again`);
  };
  const numberOf = (v: FitsValue): number | undefined => {
    if (typeof v === 'number' && Number.isFinite(v)) return v;
    if (typeof v === 'string' && /^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$/.test(v)) return Number(v);
    return undefined;
  };
  for (const [k, errKeys] of MAG_KEYWORDS) {
    const v = keyword(k);
    if (v === undefined) continue;
    const mag = numberOf(v);
    if (mag === undefined) refuse(k, v, 'the magnitude measured on the image');
    if (mag! < MAG_RANGE.min || mag! > MAG_RANGE.max) {
      throw new UnreadableFile(`${file}: the header's ${k} = ${mag} is outside ${MAG_RANGE.min}…${MAG_RANGE.max} mag, so it cannot be the magnitude measured on the image; correct or remove the keyword and upload the file again`);
    }
    observation.mag = mag;
    observation.magKeyword = k;
    for (const ek of errKeys) {
      const e = keyword(ek);
      if (e === undefined) continue;
      const err = numberOf(e);
      if (err === undefined || err < 0) refuse(ek, e, 'the error of the magnitude measured on the image');
      observation.magErr = err;
      break;
    }
    break;
  }
  for (const k of Object.keys(observation) as (keyof ImageObservation)[]) if (observation[k] === undefined) delete observation[k];
  return { format: 'fits-image', observation, warnings: meta.warnings };
}

function stripSource(message: string, file: string): string {
  return message.startsWith(`${file}: `) ? message.slice(file.length + 2) : message;
}

/** Where a cell of a delimited file is, in words: its data row, file line and column. */
function cellPlace(parsed: { header: string[]; lines: number[] }, r: number, c: number): string {
  return `row ${r + 1} (file line ${parsed.lines[r]}), column ${parsed.header[c] || c + 1}`;
}

/**
 * A NUL byte in a cell (text is never expected to hold one; a C string would end there): refused,
 * naming the first cell that has one.
 */
function refuseNul(parsed: { header: string[]; rows: string[][]; lines: number[] }, file: string): void {
  for (let r = 0; r < parsed.rows.length; r++) {
    const row = parsed.rows[r];
    for (let c = 0; c < row.length; c++) {
      if (row[c].includes('\u0000')) throw new UnreadableFile(nulCellMessage(file, cellPlace(parsed, r, c), row[c]));
    }
  }
  const h = parsed.header.findIndex((x) => x.includes('\u0000'));
  if (h >= 0) throw new UnreadableFile(`${file}: column ${h + 1} of the header holds a NUL byte (U+0000)`);
}

/** A NUL in a cell, in words (also used by the streaming intake). `place`: row, file line and column. */
export function nulCellMessage(file: string, place: string, cell: string): string {
  return `${file}, ${place}: the cell "${shownText(cell, 40)}" holds a NUL byte (U+0000), which text never holds; nothing was read`;
}

export const DECIMAL_COMMA = /^\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*$/;
export const DECIMAL_POINT = /^\s*[+-]?(\d+\.\d*|\.\d+)([eEdD][+-]?\d+)?\s*$/;

/** Decimal commas and decimal points in one semicolon-separated file, in words (also the streaming intake's). */
export function mixedDecimalsMessage(file: string, comma: { place: string; cell: string }, point: { place: string; cell: string }): string {
  return `${file}: semicolon-separated with both decimal commas (${comma.place}: "${shownText(comma.cell)}") and decimal points (${point.place}: "${shownText(point.cell)}"); which a number means cannot be told: save the file with one decimal separator (or as comma-separated CSV with decimal points)`;
}

/**
 * A semicolon-separated file (the export of a spreadsheet set to a language that writes decimal
 * commas) with numbers like 9,52: read as 9.52 when no cell uses a decimal point; refused, naming
 * one cell of each kind, when both kinds appear (which one a cell like 1,234 means cannot be told).
 */
function readDecimalCommas(parsed: { header: string[]; rows: string[][]; lines: number[] }, file: string): void {
  let comma: [number, number] | undefined;
  let point: [number, number] | undefined;
  for (let r = 0; r < parsed.rows.length && !(comma && point); r++) {
    const row = parsed.rows[r];
    for (let c = 0; c < row.length; c++) {
      const v = row[c];
      if (!comma && v.includes(',') && DECIMAL_COMMA.test(v)) comma = [r, c];
      else if (!point && v.includes('.') && DECIMAL_POINT.test(v)) point = [r, c];
    }
  }
  if (!comma) return;
  if (point) {
    throw new UnreadableFile(
      mixedDecimalsMessage(file, { place: cellPlace(parsed, ...comma), cell: parsed.rows[comma[0]][comma[1]] }, { place: cellPlace(parsed, ...point), cell: parsed.rows[point[0]][point[1]] }),
    );
  }
  for (const row of parsed.rows) {
    for (let c = 0; c < row.length; c++) if (row[c].includes(',') && DECIMAL_COMMA.test(row[c])) row[c] = row[c].replace(',', '.');
  }
}

function readTextUpload(bytes: Uint8Array, file: string, budget: ReadBudget): ReadUpload {
  let text: string;
  try {
    text = decodeText(bytes, file);
  } catch (err) {
    if (err instanceof DelimitedError) {
      throw new UnreadableFile(`${file}: ${stripSource(err.message, file)}. Upload a CSV or TSV text file, a VOTable or a FITS table.`);
    }
    throw err;
  }
  let parsed;
  try {
    parsed = parseDelimited(text, { source: file, budget });
  } catch (err) {
    if (err instanceof DelimitedError) throw new UnreadableFile(`${file}: ${stripSource(err.message, file)}`);
    throw err;
  }
  const prose = notATableReason(parsed.header, parsed.rows, parsed.headerLine);
  if (prose) throw new UnreadableFile(`${file}: ${prose}`);
  checkTextHeader(file, parsed.header, parsed.headerLine);
  if (parsed.rows.length === 0) throw new UnreadableFile(`${file}: the file has a header but no data rows`);
  if (text.includes('\u0000')) refuseNul(parsed, file);
  if (parsed.delimiter === ';') readDecimalCommas(parsed, file);
  return {
    format: parsed.delimiter === '\t' ? 'tsv' : 'csv',
    table: { file, columns: parsed.header, rows: parsed.rows, lines: parsed.lines, ...(parsed.units ? { units: parsed.units } : {}) },
  };
}

/** Lines under the header looked at to tell a table from prose. */
export const PROSE_SAMPLE_ROWS = 20;

/**
 * Why delimited text is not a table (a letter, notes, a log), or undefined. A table has at least
 * two columns (a star id and a value) and the same number of fields on (nearly) every line; prose
 * has one field per line, or as many as its sentences happen to have commas. `rows`: the first
 * PROSE_SAMPLE_ROWS lines under the header at most.
 */
export function notATableReason(header: readonly string[], rows: readonly (readonly string[])[], headerLine: number): string | undefined {
  if (header.every((h) => h.trim() === '')) return undefined; // no header at all: checkTextHeader says so
  const sample = rows.slice(0, PROSE_SAMPLE_ROWS);
  const prose = 'this looks like a text document, not a table. Upload a CSV or TSV table (a header line naming the columns, then one line per star or measurement), a VOTable or a FITS table';
  if (header.length < 2) {
    return `the first line (line ${headerLine}) has no comma, tab or semicolon, so the file would be a single column of text; a photometry table needs at least a star id and a value column: ${prose}`;
  }
  if (sample.length >= 2) {
    const fit = sample.filter((r) => r.length === header.length).length;
    if (fit * 2 < sample.length) {
      return `only ${fit} of the first ${sample.length} lines under the first line (line ${headerLine}) have its ${header.length} fields: ${prose}`;
    }
  }
  return undefined;
}

/** A text table's header must name every column once (also checked by the streaming intake). */
export function checkTextHeader(file: string, header: readonly string[], headerLine: number): void {
  if (header.length === 0 || header.every((h) => h === '')) throw new UnreadableFile(`${file}: the file has no header line with column names`);
  const seen = new Map<string, number>();
  header.forEach((h, i) => {
    if (h === '') throw new UnreadableFile(`${file}, line ${headerLine}, column ${i + 1}: the header has an empty column name`);
    if (seen.has(h)) throw new UnreadableFile(`${file}, line ${headerLine}: the column name "${h}" appears twice (columns ${seen.get(h)! + 1} and ${i + 1})`);
    seen.set(h, i);
  });
}

export type XmlTableReader = (bytes: Uint8Array, file: string, budget?: ReadBudget) => ColumnTable;

/** A VOTable (TABLEDATA) as a ColumnTable; anything else in XML is an UnreadableFile. */
export function voTableAsColumns(bytes: Uint8Array, file: string, budget?: ReadBudget): ColumnTable {
  try {
    const t = readVoTable(bytes, { source: file, budget });
    return { file, columns: t.fields.map((f) => f.name), units: t.fields.map((f) => f.unit), rows: t.rows };
  } catch (err) {
    if (err instanceof VoTableError) throw new UnreadableFile(err.message, err.unsafe ? 'unsafe' : 'unreadable');
    throw err;
  }
}

export interface ReadUploadOptions {
  /** FITS: HDU index or EXTNAME of the table (default: the first binary table). */
  hdu?: number | string;
  /** Size, rows, columns, cells and time the file may take (default: DEFAULT_INPUT_LIMITS). */
  limits?: Partial<InputLimits>;
  /** The clock of the time limit (tests pass their own). */
  clock?: Clock;
}

/**
 * Bytes → format and table. Throws UnreadableFile with a message naming the file (InputLimitError,
 * one kind of it, when the file passes a limit).
 */
export function readUpload(bytes: Uint8Array, file: string, readXmlTable: XmlTableReader = voTableAsColumns, options: ReadUploadOptions = {}): ReadUpload {
  const budget = new ReadBudget(file, options.limits, options.clock);
  budget.bytes(bytes.length);
  switch (sniffFormat(bytes)) {
    case 'empty':
      throw new UnreadableFile(`${file}: the file is empty`);
    case 'fits':
      return readFitsUpload(bytes, file, options.hdu, budget);
    case 'xml':
      return { format: 'votable', table: readXmlTable(bytes, file, budget) };
    default:
      return readTextUpload(bytes, file, budget);
  }
}
