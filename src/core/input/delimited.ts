// Delimited text (CSV / TSV) split into fields, RFC 4180 quoting: a field in double quotes may hold
// the delimiter, line breaks and "" for one quote. Hand-written because it runs in the browser too
// and must stay fast (100 000 rows × 25 columns well under a second) without Node imports.
import { ReadBudget } from './limits';

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
const SEP_LINE = /^"?sep=([,;\t])"?$/i;

/** Splits text into records. Leading lines starting with '#' are comments; blank lines are skipped. */
export interface ParseDelimitedOptions {
  delimiter?: Delimiter;
  source?: string;
  /** Rows, columns, cells and time this text may take (limits.ts); default limits when absent. */
  budget?: ReadBudget;
}

export function parseDelimited(text: string, options: ParseDelimitedOptions = {}): DelimitedTable {
  const records: string[][] = [];
  const lines: number[] = [];
  const budget = options.budget ?? new ReadBudget(options.source ?? 'table');
  let cells = 0;
  const { delimiter, comments, endLine } = scanDelimited(text, options, (fields, line) => {
    const where = () => `line ${line}`;
    if (records.length === 0) budget.columns(fields.length, where);
    else budget.rows(records.length, where);
    cells += fields.length;
    budget.cells(cells, where);
    budget.tick(where);
    records.push(fields);
    lines.push(line);
  });
  const header = records.shift() ?? [];
  const headerLine = lines.shift() ?? endLine;
  const under = linesUnderHeader(header, records);
  records.splice(0, under.skip);
  lines.splice(0, under.skip);
  return { delimiter, header: header.map((h) => h.trim()), headerLine, rows: records, lines, comments, ...(under.units ? { units: under.units } : {}) };
}

const RULE = /^\s*-+\s*$/;

function isNumberText(field: string): boolean {
  const t = field.trim();
  return t !== '' && Number.isFinite(Number(t));
}

/**
 * VizieR's tab-separated output puts a line of units and a line of dashes right under the column
 * names (common practice of VizieR's TSV download, from memory):
 *   RAJ2000  Vmag  e_Vmag        column names
 *   deg      mag   mag           units, blank for a column without one
 *   -------  ----  ------        dashes under each column
 * Neither line is data. A dashes line alone (no units) is skipped the same way. A units line is
 * only taken as such when the dashes follow it and none of its fields is a number.
 */
function linesUnderHeader(header: string[], records: string[][]): { skip: number; units?: (string | undefined)[] } {
  // One column is no photometry table, and there a lone '--' is more likely a missing value.
  if (header.length < 2) return { skip: 0 };
  const isRule = (r: string[] | undefined) => r !== undefined && r.length === header.length && r.every((f) => RULE.test(f));
  if (isRule(records[0])) return { skip: 1 };
  const unitsLine = records[0];
  if (unitsLine && unitsLine.length === header.length && isRule(records[1]) && !unitsLine.some(isNumberText)) {
    return { skip: 2, units: unitsLine.map((u) => u.trim() || undefined) };
  }
  return { skip: 0 };
}

/** Calls onRecord for each record (the header first) with its fields and 1-based starting line. */
function scanDelimited(
  text: string,
  options: { delimiter?: Delimiter; source?: string },
  onRecord: (fields: string[], line: number) => void,
): { delimiter: Delimiter; comments: string[]; endLine: number } {
  const source = options.source ?? 'table';
  let pos = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  let line = 1;
  const comments: string[] = [];
  // Leading comment and blank lines.
  for (;;) {
    if (pos >= text.length) break;
    const nl = nextLineEnd(text, pos);
    const content = text.slice(pos, nl.end);
    if (content.startsWith('#')) comments.push(content.slice(1).replace(/^ /, ''));
    else if (content.trim() !== '') break;
    pos = nl.next;
    line++;
  }
  if (pos >= text.length) return { delimiter: options.delimiter ?? ',', comments, endLine: line };
  let first = nextLineEnd(text, pos);
  const sep = SEP_LINE.exec(text.slice(pos, first.end).trim());
  let named: Delimiter | undefined;
  if (sep) {
    named = sep[1] as Delimiter;
    pos = first.next;
    line++;
    first = nextLineEnd(text, pos);
  }
  const delimiter = options.delimiter ?? named ?? detectDelimiter(text.slice(pos, first.end));
  const d = delimiter.charCodeAt(0);
  const n = text.length;
  const hasQuotes = text.indexOf('"', pos) >= 0;
  if (!hasQuotes) {
    // Fast path: no quoting anywhere, so every line break ends a record.
    const sep = text.indexOf('\n', pos) >= 0 ? '\n' : '\r';
    while (pos < n) {
      let end = text.indexOf(sep, pos);
      if (end < 0) end = n;
      let stop = end;
      if (stop > pos && text.charCodeAt(stop - 1) === 13) stop--;
      if (stop > pos && !(text.charCodeAt(pos) <= 32 && text.slice(pos, stop).trim() === '')) onRecord(text.slice(pos, stop).split(delimiter), line);
      pos = end + 1;
      line++;
    }
  }
  while (pos < n) {
    const startLine = line;
    const fields: string[] = [];
    let field = '';
    let blank = true;
    for (;;) {
      if (pos >= n) {
        fields.push(field);
        break;
      }
      let c = text.charCodeAt(pos);
      if (c === 34 /* " */ && field.trim() === '') {
        // Quoted field: everything up to the closing quote, "" is one quote.
        const open = pos;
        const openLine = line;
        pos++;
        field = '';
        for (;;) {
          const q = text.indexOf('"', pos);
          if (q < 0) throw new DelimitedError(`${source}:${openLine}: a quoted field opened here is never closed (line ${openLine}); check for a stray double quote`, { line: openLine, byteOffset: open });
          const chunk = text.slice(pos, q);
          if (chunk.includes('\n') || chunk.includes('\r')) line += countLineBreaks(chunk);
          field += chunk;
          if (text.charCodeAt(q + 1) === 34) {
            field += '"';
            pos = q + 2;
            continue;
          }
          pos = q + 1;
          break;
        }
        blank = false;
        // Anything between the closing quote and the delimiter is kept (lenient, like most readers).
        while (pos < n) {
          c = text.charCodeAt(pos);
          if (c === d || c === 10 || c === 13) break;
          field += text[pos++];
        }
        continue;
      }
      if (c === d) {
        fields.push(field);
        field = '';
        pos++;
        continue;
      }
      if (c === 10 || c === 13) {
        fields.push(field);
        pos += c === 13 && text.charCodeAt(pos + 1) === 10 ? 2 : 1;
        line++;
        break;
      }
      // Unquoted run up to the next delimiter, quote-free line end.
      let end = pos + 1;
      while (end < n) {
        const e = text.charCodeAt(end);
        if (e === d || e === 10 || e === 13) break;
        end++;
      }
      field += text.slice(pos, end);
      if (field.trim() !== '') blank = false;
      pos = end;
    }
    if (blank && fields.length === 1 && fields[0].trim() === '') continue;
    onRecord(fields, startLine);
  }
  return { delimiter, comments, endLine: line };
}

function nextLineEnd(text: string, pos: number): { end: number; next: number } {
  let i = pos;
  const n = text.length;
  while (i < n) {
    const c = text.charCodeAt(i);
    if (c === 10) return { end: i, next: i + 1 };
    if (c === 13) return { end: i, next: text.charCodeAt(i + 1) === 10 ? i + 2 : i + 1 };
    i++;
  }
  return { end: n, next: n };
}

function countLineBreaks(s: string): number {
  let count = 0;
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c === 10) count++;
    else if (c === 13 && s.charCodeAt(i + 1) !== 10) count++;
  }
  return count;
}
