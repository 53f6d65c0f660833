// An upload's table read from disk row by row, for the intake job. CSV/TSV text streams through
// DelimitedStream in 1 MB pieces (memory bounded by the longest record); a VOTable or FITS file
// is read whole by its reader, within the upload limit (decision record 0023).
import { createReadStream, openSync, readFileSync, readSync, closeSync, statSync } from 'node:fs';
import { DelimitedError, decodeText, firstInvalidUtf8, invalidUtf8Message } from '../../core/input/delimited';
import { ReadBudget, type InputLimits } from '../../core/input/limits';
import { DelimitedStream, type DelimitedHeader } from '../../core/input/delimited-stream';
import type { TableCell } from '../../core/input/column-table';
import { checkTextHeader, DECIMAL_COMMA, DECIMAL_POINT, mixedDecimalsMessage, notATableReason, nulCellMessage, PROSE_SAMPLE_ROWS, readUpload, sniffFormat, UnreadableFile, type DetectedFormat, type ImageObservation } from '../../core/input/table-file';

export interface TableHead {
  format: Exclude<DetectedFormat, 'fits-image'>;
  columns: string[];
  units: (string | undefined)[];
}

export interface TableHandlers {
  head(h: TableHead): void;
  row(cells: TableCell[], line: number | undefined): void;
  /** Called every few thousand rows. */
  progress?(rowsRead: number): void;
}

export type TableFileResult = { kind: 'image'; observation: ImageObservation } | { kind: 'table'; format: TableHead['format']; rowCount: number };

const PIECE = 1024 * 1024;

function stripSource(message: string, file: string): string {
  return message.startsWith(`${file}: `) ? message.slice(file.length + 2) : message;
}

function readHead(storedPath: string, n: number): Uint8Array {
  const fd = openSync(storedPath, 'r');
  try {
    const buf = Buffer.alloc(n);
    const got = readSync(fd, buf, 0, n, 0);
    return new Uint8Array(buf.buffer, buf.byteOffset, got);
  } finally {
    closeSync(fd);
  }
}

/** The first bytes of a file, cut before its last character (which the read may have split). */
function headOf(storedPath: string, n: number): { head: Uint8Array; whole: boolean } {
  const head = readHead(storedPath, n + 1);
  if (head.length <= n) return { head, whole: true };
  let end = n;
  while (end > 0 && (head[end] & 0xc0) === 0x80) end--;
  return { head: head.subarray(0, end), whole: false };
}

/** Checks done on arrival, before any job: an empty file or binary content named as text. Throws UnreadableFile. */
export function sniffOnArrival(storedPath: string, file: string): 'fits' | 'xml' | 'text' {
  const { head } = headOf(storedPath, 65536);
  const kind = sniffFormat(head);
  if (kind === 'empty') throw new UnreadableFile(`${file}: the file is empty`);
  if (kind === 'text') {
    try {
      decodeText(head, file);
    } catch (err) {
      if (err instanceof DelimitedError) throw new UnreadableFile(`${file}: ${stripSource(err.message, file)}. Upload a CSV or TSV text file, a VOTable or a FITS table.`);
      throw err;
    }
  }
  return kind;
}

/** Where the first invalid UTF-8 of a file is (read whole, within the size limit, only once decoding failed). */
function invalidUtf8Of(storedPath: string, file: string): UnreadableFile {
  const bytes = new Uint8Array(readFileSync(storedPath));
  const at = Math.max(0, firstInvalidUtf8(bytes));
  return new UnreadableFile(
    `${file}: ${invalidUtf8Message(bytes, at)}; Starkiln reads text files as UTF-8: save the file as UTF-8 (a file from an older tool may be Latin-1 or Windows-1252). Upload a CSV or TSV text file, a VOTable or a FITS table.`,
  );
}

/**
 * Reads an upload's table row by row. Text streams with the checks readUpload makes on a whole
 * file (UTF-8, NUL bytes, decimal commas in semicolon files, the rows, columns, size and time
 * limits); a text stream holds one record at a time, so the cells limit (a memory budget) is not
 * applied to it. Other formats are read whole by their readers, within every limit.
 */
export async function readTableFile(storedPath: string, file: string, handlers: TableHandlers, limits?: Partial<InputLimits>): Promise<TableFileResult> {
  const kind = sniffOnArrival(storedPath, file);
  if (kind !== 'text') {
    const read = readUpload(new Uint8Array(readFileSync(storedPath)), file, undefined, { limits });
    if (read.format === 'fits-image') return { kind: 'image', observation: read.observation };
    const t = read.table;
    handlers.head({ format: read.format, columns: t.columns, units: t.columns.map((_, i) => t.units?.[i]) });
    for (let r = 0; r < t.rows.length; r++) {
      handlers.row(t.rows[r], t.lines?.[r]);
      if (r % 5000 === 4999) handlers.progress?.(r + 1);
    }
    return { kind: 'table', format: read.format, rowCount: t.rows.length };
  }

  const budget = new ReadBudget(file, limits);
  budget.bytes(statSync(storedPath).size);
  let rows = 0;
  let format: TableHead['format'] = 'csv';
  let headerSeen = false;
  let header: string[] = [];
  let semicolon = false;
  let hasNul = false;
  // Semicolon files: the first cell with a decimal comma and the first with a decimal point (both: refused).
  let comma: { place: string; cell: string } | undefined;
  let point: { place: string; cell: string } | undefined;
  const place = (c: number, line: number) => `row ${rows} (file line ${line}), column ${header[c] || c + 1}`;
  // The header waits for the first lines under it: together they tell a table from prose.
  let pendingHead: DelimitedHeader | null = null;
  let waiting: { fields: string[]; line: number }[] = [];
  const rowOf = (fields: string[], line: number) => {
    budget.rows(rows + 1, () => `line ${line}`);
    budget.tick(() => `line ${line}`);
    rows++;
    if (hasNul) {
      for (let c = 0; c < fields.length; c++) if (fields[c].includes('\u0000')) throw new UnreadableFile(nulCellMessage(file, place(c, line), fields[c]));
    }
    if (semicolon) {
      for (let c = 0; c < fields.length; c++) {
        const v = fields[c];
        if (v.includes(',') && DECIMAL_COMMA.test(v)) {
          comma ??= { place: place(c, line), cell: v };
          fields[c] = v.replace(',', '.');
        } else if (!point && v.includes('.') && DECIMAL_POINT.test(v)) point = { place: place(c, line), cell: v };
        if (comma && point) throw new UnreadableFile(mixedDecimalsMessage(file, comma, point));
      }
    }
    handlers.row(fields, line);
    if (rows % 5000 === 0) handlers.progress?.(rows);
  };
  const begin = () => {
    const h = pendingHead!;
    pendingHead = null;
    const prose = notATableReason(h.header, waiting.map((w) => w.fields), h.headerLine);
    if (prose) throw new UnreadableFile(`${file}: ${prose}`);
    checkTextHeader(file, h.header, h.headerLine);
    budget.columns(h.header.length, () => `line ${h.headerLine}`);
    const nul = h.header.findIndex((x) => x.includes('\u0000'));
    if (nul >= 0) throw new UnreadableFile(`${file}: column ${nul + 1} of the header holds a NUL byte (U+0000)`);
    headerSeen = true;
    header = h.header;
    semicolon = h.delimiter === ';';
    format = h.delimiter === '\t' ? 'tsv' : 'csv';
    handlers.head({ format, columns: h.header, units: h.units ?? h.header.map(() => undefined) });
    const held = waiting;
    waiting = [];
    for (const w of held) rowOf(w.fields, w.line);
  };
  const stream = new DelimitedStream(
    {
      header: (h) => {
        pendingHead = h;
      },
      row: (fields, line) => {
        if (!pendingHead) return rowOf(fields, line);
        waiting.push({ fields, line });
        if (waiting.length >= PROSE_SAMPLE_ROWS) begin();
      },
    },
    // A record may be as long as the file may be (a 52 MB id is read, then refused by the mapping).
    { source: file, maxRecordChars: budget.limits.maxBytes },
  );
  const decoder = new TextDecoder('utf-8', { fatal: true });
  const decode = (chunk: Buffer | undefined): string => {
    try {
      return chunk ? decoder.decode(chunk, { stream: true }) : decoder.decode();
    } catch {
      throw invalidUtf8Of(storedPath, file);
    }
  };
  try {
    for await (const chunk of createReadStream(storedPath, { highWaterMark: PIECE })) {
      const text = decode(chunk as Buffer);
      if (!hasNul && text.includes('\u0000')) hasNul = true;
      stream.push(text);
    }
    stream.push(decode(undefined));
    const h = stream.end();
    if (pendingHead) begin();
    if (!headerSeen) {
      checkTextHeader(file, h.header, h.headerLine);
      throw new UnreadableFile(`${file}: the file has a header but no data rows`);
    }
  } catch (err) {
    if (err instanceof DelimitedError) throw new UnreadableFile(`${file}: ${stripSource(err.message, file)}`);
    throw err;
  }
  if (rows === 0) throw new UnreadableFile(`${file}: the file has a header but no data rows`);
  return { kind: 'table', format, rowCount: rows };
}
