// Reading one table cell: a number (with the common spellings of "no value"), trimmed text, and
// the display text of the mapping screen's preview.
import type { ColumnTable, TableCell } from './column-table';

export function textOf(cell: TableCell): string {
  if (cell === null || cell === undefined) return '';
  return typeof cell === 'string' ? cell.trim() : String(cell);
}

/** Most non-empty sample cells are numbers (one stray word in a sample does not hide a band column). */
export function looksNumeric(values: TableCell[]): boolean {
  let numbers = 0;
  let others = 0;
  for (const v of values) {
    if (typeof v === 'number' || typeof v === 'bigint') {
      numbers++;
      continue;
    }
    const t = textOf(v);
    if (t === '' || MISSING.has(t)) continue;
    if (Number.isFinite(Number(t))) numbers++;
    else others++;
  }
  return numbers >= others && (numbers > 0 || others === 0);
}

/** Cells that mean "no value" besides the empty cell: common spellings in exported tables. */
const MISSING = new Set(['', 'nan', 'NaN', 'NAN', 'NA', 'N/A', 'null', 'NULL', 'None', '--', '-']);

/** undefined = no value; NaN = not a number, ±Infinity = too large (the caller reports both). */
export function readCellNumber(cell: TableCell): number | undefined {
  if (cell === null || cell === undefined) return undefined;
  // ±Infinity is returned as such (and 1e400 reads as Infinity): the mapping reports it as not finite.
  if (typeof cell === 'number') return Number.isNaN(cell) ? undefined : cell;
  if (typeof cell === 'bigint') return Number(cell);
  if (typeof cell === 'boolean') return NaN;
  // Every number cell of every upload passes here (a 100 000-star file has millions): one character
  // scan instead of a regular expression, and no trimmed copy unless the cell has surrounding blanks.
  const n = cell.length;
  const t = n > 0 && cell.charCodeAt(0) > 32 && cell.charCodeAt(n - 1) > 32 && cell.charCodeAt(0) < 127 && cell.charCodeAt(n - 1) < 127 ? cell : cell.trim();
  const kind = decimalKind(t);
  if (kind === DECIMAL) return Number(t);
  if (kind === DECIMAL_D) return Number(t.replace(/[dD]/, 'e'));
  if (MISSING.has(t)) return undefined;
  // Number() also takes hex/binary/octal literals and 'Infinity': refuse those (decimalKind does).
  return NaN;
}

const NOT_DECIMAL = 0;
const DECIMAL = 1;
/** A decimal with a Fortran-style D exponent (1.5D3), which Number() does not read. */
const DECIMAL_D = 2;

/** Whether t is [+-]?(digits[.digits]|.digits)([eEdD][+-]?digits)? in full, and which exponent letter. */
function decimalKind(t: string): number {
  const n = t.length;
  let i = 0;
  let c = n > 0 ? t.charCodeAt(0) : 0;
  if (c === 43 || c === 45) c = ++i < n ? t.charCodeAt(i) : 0; // + -
  let digits = 0;
  while (c >= 48 && c <= 57) {
    digits++;
    c = ++i < n ? t.charCodeAt(i) : 0;
  }
  if (c === 46) {
    // '.'
    c = ++i < n ? t.charCodeAt(i) : 0;
    while (c >= 48 && c <= 57) {
      digits++;
      c = ++i < n ? t.charCodeAt(i) : 0;
    }
  }
  if (digits === 0) return NOT_DECIMAL;
  if (i === n) return DECIMAL;
  const kind = c === 101 || c === 69 ? DECIMAL : c === 100 || c === 68 ? DECIMAL_D : NOT_DECIMAL; // e E | d D
  if (kind === NOT_DECIMAL) return kind;
  c = ++i < n ? t.charCodeAt(i) : 0;
  if (c === 43 || c === 45) c = ++i < n ? t.charCodeAt(i) : 0;
  let expDigits = 0;
  while (c >= 48 && c <= 57) {
    expDigits++;
    c = ++i < n ? t.charCodeAt(i) : 0;
  }
  return expDigits > 0 && i === n ? kind : NOT_DECIMAL;
}

export const TRUE_FLAGS = new Set(['1', 'true', 't', 'yes', 'y']);
export const FALSE_FLAGS = new Set(['', '0', 'false', 'f', 'no', 'n']);

/** The first `n` rows as display text, for the mapping screen's preview. */
export function previewRows(table: ColumnTable, n = 8): string[][] {
  return table.rows.slice(0, n).map((r) => r.map((v) => (typeof v === 'number' && !Number.isInteger(v) ? String(Number(v.toPrecision(10))) : textOf(v))));
}
