// What an input file is, decided from its bytes (never from its name or the browser's type),
// and its table in the one shape the column mapping reads (core/input/mapping ColumnTable). The web
// intake and the `starkiln fit` command both read files through here, so they accept the same
// formats and say the same things about a file they cannot read.
import type { ColumnTable, TableCell } from './mapping';
import { DelimitedError, decodeText } from './delimited';
import type { DelimitedHeader } from './delimited-stream';
import { TextTableReader } from './text-table';
import { FitsError, readFits, readFitsImageHeader, readFitsTable, type FitsCell, type FitsValue } from './fits-file';
import { MAG_RANGE } from './apply-mapping';
import { readCellNumber } from './cells';
import { readVoTable, VoTableError } from './votable';
import { ReadBudget, shownText, stripSource, UnreadableFile, type Clock, type InputLimits } from './limits';

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
  // A number, or text that reads as one the way a table cell does (readCellNumber).
  const numberOf = (v: FitsValue): number | undefined => {
    const n = typeof v === 'number' || typeof v === 'string' ? readCellNumber(v) : undefined;
    return n !== undefined && Number.isFinite(n) ? n : undefined;
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

/** Bytes of a text upload as text, or an UnreadableFile saying what they are instead (decodeText). */
export function decodeTextUpload(bytes: Uint8Array, file: string): string {
  try {
    return decodeText(bytes, file);
  } catch (err) {
    if (err instanceof DelimitedError) {
      throw new UnreadableFile(`${file}: ${stripSource(err.message, file)}. Upload a CSV or TSV text file, a VOTable or a FITS table.`);
    }
    throw err;
  }
}

function readTextUpload(bytes: Uint8Array, file: string, budget: ReadBudget): ReadUpload {
  const text = decodeTextUpload(bytes, file);
  let head: DelimitedHeader | undefined;
  const rows: string[][] = [];
  const lines: number[] = [];
  const reader = new TextTableReader(
    file,
    {
      head: (h) => {
        head = h;
      },
      row: (fields, line) => {
        rows.push(fields);
        lines.push(line);
      },
    },
    budget,
    true,
  );
  reader.push(text);
  const { format } = reader.end();
  const h = head!;
  return { format, table: { file, columns: h.header, rows, lines, ...(h.units ? { units: h.units } : {}) } };
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
