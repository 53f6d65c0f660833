// Delimited text (CSV / TSV) split into fields, RFC 4180 quoting: a field in double quotes may hold
// the delimiter, line breaks and "" for one quote. Hand-written because it runs in the browser too
// and must stay fast (100 000 rows × 25 columns well under a second) without Node imports.

/** TextDecoder is in every runtime we target (browsers, Node ≥ 11); the core's ES-only lib lacks its type. */
declare const TextDecoder: new (label?: string, options?: { fatal?: boolean }) => { decode(bytes: Uint8Array): string };

export type Delimiter = ',' | '\t' | ';';

export interface DelimitedTable {
  delimiter: Delimiter;
  /** Header fields (the first non-comment line). */
  header: string[];
  /** 1-based file line of the header. */
  headerLine: number;
  /** Data records; rows[i] is data row i + 1 as a person counts it (the header is not a data row). */
  rows: string[][];
  /** 1-based file line where each data row starts (quoted line breaks make it differ from row + offset). */
  lines: number[];
  /** Leading '#' lines (without the '#'), e.g. a provenance header. */
  comments: string[];
  /** Units per column from a units line under the header (VizieR TSV); undefined where blank. */
  units?: (string | undefined)[];
}

export class DelimitedError extends Error {
  readonly line?: number;
  readonly byteOffset?: number;
  constructor(message: string, where: { line?: number; byteOffset?: number } = {}) {
    super(message);
    this.name = 'DelimitedError';
    this.line = where.line;
    this.byteOffset = where.byteOffset;
  }
}

/**
 * Offset of the first byte that does not belong to well-formed UTF-8 (RFC 3629: no overlong forms,
 * no surrogates, nothing past U+10FFFF), or -1 when all of it is UTF-8.
 */
export function firstInvalidUtf8(bytes: Uint8Array, from = 0): number {
  const n = bytes.length;
  let i = from;
  while (i < n) {
    const b = bytes[i];
    if (b < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let min: number;
    let max = 0xbf;
    if (b >= 0xc2 && b <= 0xdf) {
      need = 1;
      min = 0x80;
    } else if (b >= 0xe0 && b <= 0xef) {
      need = 2;
      min = b === 0xe0 ? 0xa0 : 0x80;
      if (b === 0xed) max = 0x9f;
    } else if (b >= 0xf0 && b <= 0xf4) {
      need = 3;
      min = b === 0xf0 ? 0x90 : 0x80;
      if (b === 0xf4) max = 0x8f;
    } else return i;
    if (i + need >= n) return i;
    const second = bytes[i + 1];
    if (second === undefined || second < min || second > max) return i;
    for (let k = 2; k <= need; k++) {
      const c = bytes[i + k];
      if (c === undefined || c < 0x80 || c > 0xbf) return i;
    }
    i += need + 1;
  }
  return -1;
}

/** 1-based line of a byte offset (line breaks are LF, CR LF or a lone CR). */
export function lineOfByte(bytes: Uint8Array, offset: number): number {
  let line = 1;
  for (let i = 0; i < offset && i < bytes.length; i++) {
    if (bytes[i] === 0x0a) line++;
    else if (bytes[i] === 0x0d && bytes[i + 1] !== 0x0a) line++;
  }
  return line;
}

/** The invalid UTF-8 at `at` in words: its byte(s), offset and line. */
export function invalidUtf8Message(bytes: Uint8Array, at: number): string {
  const shown = Array.from(bytes.subarray(at, Math.min(at + 4, bytes.length)), (b) => `0x${b.toString(16).toUpperCase().padStart(2, '0')}`).join(' ');
  return `invalid UTF-8 at byte offset ${at} (line ${lineOfByte(bytes, at)}; bytes ${shown})`;
}

/**
 * Bytes → text, refusing what is clearly not text: known binary signatures, UTF-16, NUL bytes among
 * other control bytes in the first 64 kB, or invalid UTF-8 (named by byte offset and line; a file
 * saved as Latin-1 or Windows-1252 must be saved again as UTF-8). A stray NUL in otherwise clean
 * text is left for the table reader, which names its row and column.
 */
export function decodeText(bytes: Uint8Array, source: string): string {
  const head = bytes.subarray(0, 65536);
  const sig = String.fromCharCode(...head.subarray(0, 9));
  if (sig === 'SIMPLE  =') throw new DelimitedError(`${source}: this is a FITS file, not CSV/TSV text; read it as FITS (by its .fits extension)`, { byteOffset: 0 });
  if (sig.startsWith('PK\u0003\u0004')) throw new DelimitedError(`${source}: binary content (a ZIP archive, e.g. a spreadsheet .xlsx), not CSV/TSV text; export the sheet as CSV`, { byteOffset: 0 });
  if (head[0] === 0x1f && head[1] === 0x8b) throw new DelimitedError(`${source}: binary content (gzip-compressed), not CSV/TSV text; decompress it first`, { byteOffset: 0 });
  if ((head[0] === 0xff && head[1] === 0xfe) || (head[0] === 0xfe && head[1] === 0xff)) {
    throw new DelimitedError(`${source}: UTF-16 text (it starts with a UTF-16 byte-order mark); save it as UTF-8`, { byteOffset: 0 });
  }
  const nul = head.indexOf(0);
  if (nul >= 0 && looksBinary(head, head.length === bytes.length)) throw new DelimitedError(`${source}: binary content (byte 0x00 at byte offset ${nul}), not CSV/TSV text`, { byteOffset: nul });
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    const at = Math.max(0, firstInvalidUtf8(bytes));
    throw new DelimitedError(`${source}: ${invalidUtf8Message(bytes, at)}; Starkiln reads text files as UTF-8: save the file as UTF-8 (a file from an older tool may be Latin-1 or Windows-1252)`, {
      byteOffset: at,
      line: lineOfByte(bytes, at),
    });
  }
}

/** More than a few NULs, or control bytes other than tab, line breaks and form feed: not text. */
function looksBinary(head: Uint8Array, whole: boolean): boolean {
  let nuls = 0;
  for (let i = 0; i < head.length; i++) {
    const b = head[i];
    if (b === 0 && ++nuls > 8) return true;
    if (b !== 0 && b < 0x20 && b !== 0x09 && b !== 0x0a && b !== 0x0d && b !== 0x0c) return true;
  }
  // Invalid UTF-8 too (a character cut by the end of the first 64 kB does not count).
  const bad = firstInvalidUtf8(head);
  return bad >= 0 && (whole || bad < head.length - 3);
}

/** Delimiter counts outside double quotes in one line. */
function countOutsideQuotes(line: string, c: string): number {
  let n = 0;
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i];
    if (ch === '"') quoted = !quoted;
    else if (!quoted && ch === c) n++;
  }
  return n;
}

/** Tab if the header has one, else semicolon if it has more semicolons than commas (outside quotes), else comma. */
export function detectDelimiter(headerLine: string): Delimiter {
  if (headerLine.includes('\t')) return '\t';
  if (headerLine.includes(';') && countOutsideQuotes(headerLine, ';') > countOutsideQuotes(headerLine, ',')) return ';';
  return ',';
}

/** Spreadsheet exports may start with a "sep=;" line naming the delimiter. */
export const SEP_LINE = /^"?sep=([,;\t])"?$/i;

/** A line of dashes under a column name (VizieR TSV). */
export const RULE = /^\s*-+\s*$/;

export function isNumberText(field: string): boolean {
  const t = field.trim();
  return t !== '' && Number.isFinite(Number(t));
}
