// Photometry input tables of every supported format → stars with measurements and problems.
// CSV/TSV (wide or long) and FITS binary tables read the same canonical columns; catalogue-native
// names (Gaia fluxes, 2MASS j_m with quality letters …) come in through options.columnMap, which
// the column auto-detection (issue 4) will fill in.
import { readPhotometryRows, readPhotometryTable, type PhotometryTable, type ReadPhotometryOptions, type RowStream } from './csv';
import { FitsError, readFitsTable, type FitsCell, type FitsTable } from './fits';

export * from './csv';
export { FitsError, readFits, readFitsTable, readFitsImageHeader, type FitsFile, type FitsHdu, type FitsTable, type FitsObservationMeta } from './fits';

export type InputKind = 'fits' | 'delimited';

/** FITS by its first card (whatever the file is called), else delimited text. */
export function detectInputKind(bytes: Uint8Array): InputKind {
  const sig = 'SIMPLE  =';
  if (bytes.length < sig.length) return 'delimited';
  for (let i = 0; i < sig.length; i++) if (bytes[i] !== sig.charCodeAt(i)) return 'delimited';
  return 'fits';
}

function cellText(v: FitsCell): string {
  if (v === null) return '';
  if (typeof v === 'string') return v;
  if (typeof v === 'number' || typeof v === 'bigint') return String(v);
  if (typeof v === 'boolean') return v ? '1' : '0';
  // Arrays and complex numbers have no place in a photometry column; the reader reports them as non-numbers.
  return Array.isArray(v) ? `[${v.length} values]` : `(${v.re}, ${v.im})`;
}

/** A FITS binary table as rows of text cells; a row's position is its 1-based table row. */
export function fitsRowStream(table: FitsTable): RowStream {
  return {
    header: table.columns.map((c) => c.name),
    headerLine: 0,
    delimiter: null,
    comments: [],
    forEach(cb) {
      const cols = table.columns.map((c) => table.getColumn(c.name));
      for (let r = 0; r < table.rowCount; r++) cb(cols.map((col) => cellText(col[r])), r + 1, r);
      return table.rowCount;
    },
  };
}

export interface ReadPhotometryFileOptions extends ReadPhotometryOptions {
  /** FITS: HDU index or EXTNAME of the table (default: the first binary table). */
  hdu?: number | string;
}

/** Any supported input file → stars and problems. FITS problems are positioned by table row. */
export function readPhotometryFile(bytes: Uint8Array, options: ReadPhotometryFileOptions): PhotometryTable & { kind: InputKind } {
  const file = options.file ?? 'table';
  if (detectInputKind(bytes) === 'fits') {
    try {
      const table = readFitsTable(bytes, { source: file, hdu: options.hdu });
      return { ...readPhotometryRows(fitsRowStream(table), { ...options, file }), kind: 'fits' };
    } catch (e) {
      if (!(e instanceof FitsError)) throw e;
      const message = e.message.startsWith(`${file}: `) ? e.message.slice(file.length + 2) : e.message;
      return { format: 'wide', delimiter: null, stars: [], problems: [{ file, row: 0, line: 0, severity: 'error', message }], rowCount: 0, rejectedRows: 0, bandKeys: [], comments: [], kind: 'fits' };
    }
  }
  return { ...readPhotometryTable(bytes, options), kind: 'delimited' };
}
