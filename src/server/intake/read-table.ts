// An upload's table read from disk row by row, for the intake job. CSV/TSV text streams through
// the core's TextTableReader in 1 MB pieces (memory bounded by the longest record; the same checks
// as a text read whole); a VOTable or FITS file
// is read whole by its reader, within the upload limit (decision record 0023).
import { createReadStream, openSync, readFileSync, readSync, closeSync, statSync } from 'node:fs';
import { firstInvalidUtf8, invalidUtf8Message } from '../../core/input/delimited';
import { ReadBudget, type InputLimits } from '../../core/input/limits';
import type { TableCell } from '../../core/input/column-table';
import { decodeTextUpload, readUpload, sniffFormat, UnreadableFile, type DetectedFormat, type ImageObservation } from '../../core/input/table-file';
import { TextTableReader } from '../../core/input/text-table';

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

/** The first n bytes of a file, cut before a character the read may have split. */
function headOf(storedPath: string, n: number): Uint8Array {
  const head = readHead(storedPath, n + 1);
  if (head.length <= n) return head;
  let end = n;
  while (end > 0 && (head[end] & 0xc0) === 0x80) end--;
  return head.subarray(0, end);
}

/** Checks done on arrival, before any job: an empty file or binary content named as text. Throws UnreadableFile. */
export function sniffOnArrival(storedPath: string, file: string): 'fits' | 'xml' | 'text' {
  const head = headOf(storedPath, 65536);
  const kind = sniffFormat(head);
  if (kind === 'empty') throw new UnreadableFile(`${file}: the file is empty`);
  if (kind === 'text') decodeTextUpload(head, file);
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
  const reader = new TextTableReader(
    file,
    {
      head: (h) => handlers.head({ format: h.delimiter === '\t' ? 'tsv' : 'csv', columns: h.header, units: h.units ?? h.header.map(() => undefined) }),
      row: (fields, line) => {
        handlers.row(fields, line);
        if (++rows % 5000 === 0) handlers.progress?.(rows);
      },
    },
    budget,
    false,
  );
  const decoder = new TextDecoder('utf-8', { fatal: true });
  const decode = (chunk: Buffer | undefined): string => {
    try {
      return chunk ? decoder.decode(chunk, { stream: true }) : decoder.decode();
    } catch {
      throw invalidUtf8Of(storedPath, file);
    }
  };
  for await (const chunk of createReadStream(storedPath, { highWaterMark: PIECE })) reader.push(decode(chunk as Buffer));
  reader.push(decode(undefined));
  const { format } = reader.end();
  return { kind: 'table', format, rowCount: rows };
}
