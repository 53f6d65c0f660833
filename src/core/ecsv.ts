// ECSV writer (astropy's Enhanced Character Separated Values, format version 1.0; the format is
// described in astropy's documentation and the ECSV proposal, APE 6): a YAML header in '# ' lines —
// the delimiter, each column's name, datatype, unit and description, the table metadata — then a
// comma-separated header row and the rows. astropy reads it with `Table.read(path)` and no
// options (the .ecsv extension names the format). Numbers are written at full precision (the
// shortest text that reads back to the same double); a missing value is an empty field, which ECSV
// reads as masked. Text is written as given (no spreadsheet quote: ECSV is for programs). YAML
// values are written as JSON, which YAML reads (JSON is a subset of YAML 1.2 flow style).
import type { CatalogueColumn, CatalogueRow } from './catalogue';

export type EcsvDatatype = 'string' | 'int64' | 'float64';

export interface EcsvColumn {
  name: string;
  datatype: EcsvDatatype;
  /** An astropy-readable unit string, or none. */
  unit?: string;
  description?: string;
}

const TEXT_COLUMNS = new Set(['id', 'bands_used', 'flags', 'lum_class', 'lum_class_source', 'model', 'review_status', 'batch_id', 'review_mark', 'residuals_sigma', 'excluded_bands', 'distance_source']);
const INT_COLUMNS = new Set(['n_bands']);

/** ECSV columns for catalogue columns: text and integer columns by name, the rest float64. */
export function ecsvColumns(columns: readonly CatalogueColumn[]): EcsvColumn[] {
  return columns.map((c) => ({
    name: c.name,
    datatype: TEXT_COLUMNS.has(c.name) ? 'string' : INT_COLUMNS.has(c.name) ? 'int64' : 'float64',
    ...(c.unit ? { unit: c.unit } : {}),
    description: c.description,
  }));
}

/** A CSV field for the body: quoted when it holds the delimiter, a quote, a line break or edge blanks. */
function field(s: string): string {
  return /[",\r\n]|^\s|\s$/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

function value(v: string | number | null | undefined): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  return field(v);
}

const yaml = (v: unknown) => JSON.stringify(v).replace(/[\u2028\u2029]/g, (c) => (c === '\u2028' ? '\\u2028' : '\\u2029'));

/** The header: every line ends with a newline. `meta` becomes the table's metadata (astropy Table.meta). */
export function ecsvHeader(columns: readonly EcsvColumn[], meta: Record<string, unknown>): string {
  let s = "# %ECSV 1.0\n# ---\n# delimiter: ','\n# datatype:\n";
  for (const c of columns) {
    s += `# - {name: ${yaml(c.name)}, ${c.unit ? `unit: ${yaml(c.unit)}, ` : ''}datatype: ${c.datatype}${c.description ? `, description: ${yaml(c.description)}` : ''}}\n`;
  }
  const keys = Object.keys(meta);
  if (keys.length) {
    s += '# meta:\n';
    for (const k of keys) s += `#   ${yaml(k)}: ${yaml(meta[k])}\n`;
  }
  s += '# schema: astropy-2.0\n';
  s += `${columns.map((c) => field(c.name)).join(',')}\n`;
  return s;
}

/** One data line (with its newline). */
export function ecsvLine(row: CatalogueRow, columns: readonly EcsvColumn[]): string {
  let line = '';
  for (let i = 0; i < columns.length; i++) {
    if (i > 0) line += ',';
    line += value(row[columns[i].name]);
  }
  return `${line}\n`;
}
