// A CSV/TSV table read with the checks every text upload gets, whether the text comes whole (the
// readers that hold a table in memory: `starkiln fit`, readUpload) or in pieces (the intake job,
// which streams a file of any size): the header names each column once; rows, columns and reading
// time within the limits (INPUT_MAX_*); no NUL byte in a cell; the decimal commas of a semicolon
// file read as points, and refused when decimal points appear too. Every refusal is an
// UnreadableFile naming the file, row, file line and column.
import { DelimitedError } from './delimited';
import { DelimitedStream, type DelimitedHeader } from './delimited-stream';
import { shownText, stripSource, UnreadableFile, type ReadBudget } from './limits';

/** A text table's header must name every column once. */
export function checkTextHeader(file: string, header: readonly string[], headerLine: number): void {
  if (header.length === 0 || header.every((h) => h === '')) throw new UnreadableFile(`${file}: the file has no header line with column names`);
  const seen = new Map<string, number>();
  header.forEach((h, i) => {
    if (h === '') throw new UnreadableFile(`${file}, line ${headerLine}, column ${i + 1}: the header has an empty column name`);
    if (seen.has(h)) throw new UnreadableFile(`${file}, line ${headerLine}: the column name "${h}" appears twice (columns ${seen.get(h)! + 1} and ${i + 1})`);
    seen.set(h, i);
  });
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

const DECIMAL_COMMA = /^\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*$/;
const DECIMAL_POINT = /^\s*[+-]?(\d+\.\d*|\.\d+)([eEdD][+-]?\d+)?\s*$/;

export interface TextTableHandlers {
  /** Called once, before the first row, with the checked header. */
  head(h: DelimitedHeader): void;
  /** Each data row (decimal commas already read as points) with the file line it starts on. */
  row(fields: string[], line: number): void;
}

export class TextTableReader {
  private readonly stream: DelimitedStream;
  private header: string[] = [];
  private headerSeen = false;
  private semicolon = false;
  private hasNul = false;
  private rows = 0;
  private cells = 0;
  /** Semicolon files: the first cell with a decimal comma and the first with a decimal point (both: refused). */
  private comma: { place: string; cell: string } | undefined;
  private point: { place: string; cell: string } | undefined;
  /** The header and the first lines under it, held until they tell a table from prose. */
  private pending: { head: DelimitedHeader; rows: { fields: string[]; line: number }[] } | null = null;

  /**
   * `holdsRows`: the caller keeps every row in memory, so the cells limit (a memory budget) applies;
   * a caller that streams rows on holds one record at a time and needs no such limit.
   */
  constructor(
    private readonly file: string,
    private readonly handlers: TextTableHandlers,
    private readonly budget: ReadBudget,
    private readonly holdsRows: boolean,
  ) {
    this.stream = new DelimitedStream(
      { header: (h) => this.hold(h), row: (fields, line) => this.take(fields, line) },
      // A record may be as long as the file may be (a 52 MB id is read, then refused by the mapping).
      { source: file, maxRecordChars: budget.limits.maxBytes },
    );
  }

  push(text: string): void {
    if (!this.hasNul && text.includes('\u0000')) this.hasNul = true;
    this.guard(() => this.stream.push(text));
  }

  /** Ends the text; the table's format and row count. */
  end(): { format: 'csv' | 'tsv'; rows: number } {
    const h = this.guard(() => this.stream.end());
    if (this.pending) this.release();
    if (!this.headerSeen) checkTextHeader(this.file, h.header, h.headerLine);
    if (this.rows === 0) throw new UnreadableFile(`${this.file}: the file has a header but no data rows`);
    return { format: h.delimiter === '\t' ? 'tsv' : 'csv', rows: this.rows };
  }

  private guard<T>(f: () => T): T {
    try {
      return f();
    } catch (err) {
      if (err instanceof DelimitedError) throw new UnreadableFile(`${this.file}: ${stripSource(err.message, this.file)}`);
      throw err;
    }
  }

  private place(c: number, line: number): string {
    return `row ${this.rows} (file line ${line}), column ${this.header[c] || c + 1}`;
  }

  private hold(head: DelimitedHeader): void {
    this.pending = { head, rows: [] };
  }

  private take(fields: string[], line: number): void {
    if (!this.pending) return this.onRow(fields, line);
    this.pending.rows.push({ fields, line });
    if (this.pending.rows.length >= PROSE_SAMPLE_ROWS) this.release();
  }

  /** The held header and lines, checked as a table first, then read. */
  private release(): void {
    const { head, rows } = this.pending!;
    this.pending = null;
    const prose = notATableReason(head.header, rows.map((r) => r.fields), head.headerLine);
    if (prose) throw new UnreadableFile(`${this.file}: ${prose}`);
    this.onHeader(head);
    for (const r of rows) this.onRow(r.fields, r.line);
  }

  private onHeader(h: DelimitedHeader): void {
    checkTextHeader(this.file, h.header, h.headerLine);
    this.budget.columns(h.header.length, () => `line ${h.headerLine}`);
    const nul = h.header.findIndex((x) => x.includes('\u0000'));
    if (nul >= 0) throw new UnreadableFile(`${this.file}: column ${nul + 1} of the header holds a NUL byte (U+0000)`);
    this.headerSeen = true;
    this.header = h.header;
    this.semicolon = h.delimiter === ';';
    this.cells = h.header.length;
    this.handlers.head(h);
  }

  private onRow(fields: string[], line: number): void {
    const where = () => `line ${line}`;
    this.budget.rows(this.rows + 1, where);
    this.budget.tick(where);
    if (this.holdsRows) {
      this.cells += fields.length;
      this.budget.cells(this.cells, where);
    }
    this.rows++;
    if (this.hasNul) {
      for (let c = 0; c < fields.length; c++) {
        if (fields[c].includes('\u0000')) {
          throw new UnreadableFile(`${this.file}, ${this.place(c, line)}: the cell "${shownText(fields[c], 40)}" holds a NUL byte (U+0000), which text never holds; nothing was read`);
        }
      }
    }
    // A semicolon file from a spreadsheet set to a language that writes decimal commas: 9,52 is read
    // as 9.52; refused, naming one cell of each kind, when decimal points appear too (which one a
    // cell like 1,234 means cannot be told).
    if (this.semicolon) {
      for (let c = 0; c < fields.length; c++) {
        const v = fields[c];
        if (v.includes(',') && DECIMAL_COMMA.test(v)) {
          this.comma ??= { place: this.place(c, line), cell: v };
          fields[c] = v.replace(',', '.');
        } else if (!this.point && v.includes('.') && DECIMAL_POINT.test(v)) this.point = { place: this.place(c, line), cell: v };
        if (this.comma && this.point) {
          throw new UnreadableFile(
            `${this.file}: semicolon-separated with both decimal commas (${this.comma.place}: "${shownText(this.comma.cell)}") and decimal points (${this.point.place}: "${shownText(this.point.cell)}"); which a number means cannot be told: save the file with one decimal separator (or as comma-separated CSV with decimal points)`,
          );
        }
      }
    }
    this.handlers.row(fields, line);
  }
}
