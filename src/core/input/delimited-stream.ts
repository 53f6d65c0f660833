// Delimited text (CSV / TSV) read piece by piece: text is pushed in chunks and each record is handed
// on as soon as it is complete, so a file of any size is read with memory bounded by the longest
// record, and the records, header, units line and line numbers do not depend on where the chunks
// end. The intake job streams uploads through it (decision record 0023); parseDelimited below is the
// same scanner given a whole text at once, for the readers that hold a table in memory.
import { DelimitedError, detectDelimiter, isNumberText, RULE, SEP_LINE, type DelimitedTable, type Delimiter } from './delimited';
import { ReadBudget } from './limits';

export interface DelimitedHeader {
  delimiter: Delimiter;
  header: string[];
  headerLine: number;
  comments: string[];
  units?: (string | undefined)[];
}

export interface DelimitedStreamHandlers {
  /** Called once, before the first row (also for a file with a header and no rows). */
  header(h: DelimitedHeader): void;
  /** Each data record with the 1-based line it starts on. */
  row(fields: string[], line: number): void;
}

export class DelimitedStream {
  private buf = '';
  private pos = 0;
  private line = 1;
  private started = false;
  private inPreamble = true;
  private sepSeen = false;
  private delimiter: Delimiter | undefined;
  private readonly comments: string[] = [];
  /** The header and up to two records under it, held until the units line can be told apart. */
  private head: { fields: string[]; line: number }[] = [];
  private headerDone = false;
  private readonly source: string;
  private readonly maxRecordChars: number;
  /** Next position ≥ pos of a quote / carriage return in buf (−1: none left), so no search runs to the end per line. */
  private quoteAt = -2;
  private crAt = -2;

  constructor(
    private readonly handlers: DelimitedStreamHandlers,
    options: { delimiter?: Delimiter; source?: string; maxRecordChars?: number } = {},
  ) {
    this.source = options.source ?? 'table';
    this.maxRecordChars = options.maxRecordChars ?? 16 * 1024 * 1024;
    this.delimiter = options.delimiter;
  }

  push(text: string): void {
    if (text === '') return;
    this.buf = this.pos > 0 ? this.buf.slice(this.pos) + text : this.buf + text;
    this.pos = 0;
    this.quoteAt = -2;
    this.crAt = -2;
    this.scan(false);
    const waiting = this.buf.length - this.pos;
    if (waiting > this.maxRecordChars) {
      throw new DelimitedError(`${this.source}:${this.line}: the record starting on line ${this.line} is longer than ${this.maxRecordChars.toLocaleString('en')} characters (an unclosed quote, or no line breaks); check the file`, { line: this.line });
    }
  }

  end(): DelimitedHeader {
    this.scan(true);
    this.flushHead(true);
    return this.headerInfo();
  }

  private headerInfo(): DelimitedHeader {
    const header = this.head[0]?.fields ?? [];
    return { delimiter: this.delimiter ?? ',', header: header.map((h) => h.trim()), headerLine: this.head[0]?.line ?? this.line, comments: this.comments };
  }

  private scan(final: boolean): void {
    const text = this.buf;
    if (!this.started) {
      this.started = true;
      if (text.charCodeAt(0) === 0xfeff) this.pos = 1;
    }
    if (this.inPreamble) {
      // Leading comment and blank lines (a line is only judged once its end has arrived).
      for (;;) {
        if (this.pos >= text.length) return;
        const nl = this.lineEnd(text, this.pos);
        if (nl.end === text.length && !final) return;
        if (!final && text.charCodeAt(nl.end) === 13 && nl.end + 1 === text.length) return; // \r\n may be split
        const content = text.slice(this.pos, nl.end);
        if (content.startsWith('#')) this.comments.push(content.slice(1).replace(/^ /, ''));
        else if (content.trim() !== '') {
          const sep = this.sepSeen ? null : SEP_LINE.exec(content.trim());
          if (sep) {
            // A spreadsheet's "sep=;" line names the delimiter.
            this.sepSeen = true;
            this.delimiter ??= sep[1] as Delimiter;
          } else {
            this.delimiter ??= detectDelimiter(content);
            this.inPreamble = false;
            break;
          }
        }
        this.pos = nl.next;
        this.line++;
      }
    }
    const d = this.delimiter!.charCodeAt(0);
    const n = text.length;
    while (this.pos < n) {
      const startPos = this.pos;
      const startLine = this.line;
      const nl = this.lineEnd(text, startPos);
      if (nl.end === n && !final) return; // the record's end has not arrived yet
      // A line break that may be the first half of \r\n waits for the next byte.
      if (!final && text.charCodeAt(nl.end) === 13 && nl.end + 1 === n) return;
      const q = this.nextQuote(text, startPos);
      if (q < 0 || q >= nl.end) {
        // No quote on this line: every delimiter splits, the line break ends the record.
        if (nl.end > startPos && !(text.charCodeAt(startPos) <= 32 && text.slice(startPos, nl.end).trim() === '')) {
          this.record(text.slice(startPos, nl.end).split(this.delimiter!), startLine);
        }
        this.pos = nl.next;
        this.line++;
        continue;
      }
      const r = this.quotedRecord(text, startPos, d, final);
      if (!r) {
        // Incomplete (a quoted field still open, or its line end not here): wait for more text.
        this.pos = startPos;
        this.line = startLine;
        return;
      }
      this.pos = r.next;
      this.line = r.line;
      if (r.blank && r.fields.length === 1 && r.fields[0].trim() === '') continue;
      this.record(r.fields, startLine);
    }
  }

  /** One record starting at pos with quoting (RFC 4180), or null when the text ends inside it. */
  private quotedRecord(text: string, start: number, d: number, final: boolean): { fields: string[]; next: number; line: number; blank: boolean } | null {
    let pos = start;
    let line = this.line;
    const n = text.length;
    const fields: string[] = [];
    let field = '';
    let blank = true;
    for (;;) {
      if (pos >= n) {
        if (!final) return null;
        fields.push(field);
        return { fields, next: pos, line, blank };
      }
      let c = text.charCodeAt(pos);
      if (c === 34 && field.trim() === '') {
        const open = pos;
        const openLine = line;
        pos++;
        field = '';
        for (;;) {
          const q = text.indexOf('"', pos);
          if (q < 0 || (q + 1 >= n && !final)) {
            if (!final) return null;
            throw new DelimitedError(`${this.source}:${openLine}: a quoted field opened here is never closed (line ${openLine}); check for a stray double quote`, { line: openLine, byteOffset: open });
          }
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
        if (c === 13 && pos + 1 >= n && !final) return null;
        fields.push(field);
        pos += c === 13 && text.charCodeAt(pos + 1) === 10 ? 2 : 1;
        line++;
        return { fields, next: pos, line, blank };
      }
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
  }

  private nextQuote(text: string, pos: number): number {
    if (this.quoteAt === -2 || (this.quoteAt >= 0 && this.quoteAt < pos)) this.quoteAt = text.indexOf('"', pos);
    return this.quoteAt;
  }

  private lineEnd(text: string, pos: number): { end: number; next: number } {
    const n = text.length;
    if (this.crAt === -2 || (this.crAt >= 0 && this.crAt < pos)) this.crAt = text.indexOf('\r', pos);
    const lf = text.indexOf('\n', pos);
    const cr = this.crAt;
    if (lf < 0 && cr < 0) return { end: n, next: n };
    const i = lf < 0 ? cr : cr < 0 ? lf : Math.min(lf, cr);
    if (i === cr) return { end: i, next: text.charCodeAt(i + 1) === 10 ? i + 2 : i + 1 };
    return { end: i, next: i + 1 };
  }

  private record(fields: string[], line: number): void {
    if (this.headerDone) {
      this.handlers.row(fields, line);
      return;
    }
    this.head.push({ fields, line });
    if (this.head.length === 3) this.flushHead(false);
  }

  /**
   * The header is known once two records follow it (or the file ends). VizieR's tab-separated output
   * puts a line of units and a line of dashes right under the column names (common practice of
   * VizieR's TSV download, from memory):
   *   RAJ2000  Vmag  e_Vmag        column names
   *   deg      mag   mag           units, blank for a column without one
   *   -------  ----  ------        dashes under each column
   * Neither line is data. A dashes line alone (no units) is skipped the same way. A units line is
   * only taken as such when the dashes follow it and none of its fields is a number; one column is
   * no photometry table, and there a lone '--' is more likely a missing value.
   */
  private flushHead(final: boolean): void {
    if (this.headerDone || (!final && this.head.length < 3)) return;
    this.headerDone = true;
    const [first, ...rest] = this.head;
    const info = this.headerInfo();
    if (!first) {
      this.handlers.header(info);
      return;
    }
    const header = first.fields;
    let skip = 0;
    let units: (string | undefined)[] | undefined;
    if (header.length >= 2) {
      const isRule = (r: string[] | undefined) => r !== undefined && r.length === header.length && r.every((f) => RULE.test(f));
      if (isRule(rest[0]?.fields)) skip = 1;
      else if (rest[0] && rest[0].fields.length === header.length && isRule(rest[1]?.fields) && !rest[0].fields.some(isNumberText)) {
        skip = 2;
        units = rest[0].fields.map((u) => u.trim() || undefined);
      }
    }
    this.handlers.header({ ...info, ...(units ? { units } : {}) });
    for (const r of rest.slice(skip)) this.handlers.row(r.fields, r.line);
  }
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

export interface ParseDelimitedOptions {
  delimiter?: Delimiter;
  source?: string;
  /** Rows, columns, cells and time this text may take (limits.ts); default limits when absent. */
  budget?: ReadBudget;
}

/**
 * A whole delimited text as a table: the stream above given the text in one piece. Leading lines
 * starting with '#' are comments; blank lines are skipped. Holds every row, so the budget's cell
 * limit (a memory budget) applies as well as its row, column and time limits.
 */
export function parseDelimited(text: string, options: ParseDelimitedOptions = {}): DelimitedTable {
  const source = options.source ?? 'table';
  const budget = options.budget ?? new ReadBudget(source);
  const rows: string[][] = [];
  const lines: number[] = [];
  let cells = 0;
  let units: DelimitedHeader['units'];
  const stream = new DelimitedStream(
    {
      header: (h) => {
        if (h.header.length) budget.columns(h.header.length, () => `line ${h.headerLine}`);
        cells = h.header.length;
        units = h.units;
      },
      row: (fields, line) => {
        const where = () => `line ${line}`;
        budget.rows(rows.length + 1, where);
        cells += fields.length;
        budget.cells(cells, where);
        budget.tick(where);
        rows.push(fields);
        lines.push(line);
      },
    },
    // The whole text is in memory already: a record may be as long as the text.
    { delimiter: options.delimiter, source, maxRecordChars: Math.max(text.length, 1) },
  );
  stream.push(text);
  const h = stream.end();
  return { delimiter: h.delimiter, header: h.header, headerLine: h.headerLine, rows, lines, comments: h.comments, ...(units ? { units } : {}) };
}
