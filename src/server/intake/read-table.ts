// An upload's table read from disk row by row, for the intake job. CSV/TSV text streams through
// DelimitedStream in 1 MB pieces (memory bounded by the longest record); a VOTable or FITS file
// is read whole by its reader, within the upload limit (decision record 0018).
import { createReadStream, openSync, readFileSync, readSync, closeSync } from 'node:fs';
import { DelimitedError, decodeText } from '../../core/input/delimited';
import { DelimitedStream } from '../../core/input/delimited-stream';
import type { TableCell } from '../../core/input/column-table';
import { checkTextHeader, readUpload, sniffFormat, UnreadableFile, type DetectedFormat, type ImageObservation } from '../../core/input/table-file';

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

/** The text is not UTF-8: read it again byte for byte as Latin-1 (as decodeText does for a whole file). */
export class NotUtf8 extends Error {}

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

/** Checks done on arrival, before any job: an empty file or binary content named as text. Throws UnreadableFile. */
export function sniffOnArrival(storedPath: string, file: string): 'fits' | 'xml' | 'text' {
  const head = readHead(storedPath, 65536);
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

export async function readTableFile(storedPath: string, file: string, handlers: TableHandlers, encoding: 'utf-8' | 'latin1' = 'utf-8'): Promise<TableFileResult> {
  const kind = sniffOnArrival(storedPath, file);
  if (kind !== 'text') {
    const read = readUpload(new Uint8Array(readFileSync(storedPath)), file);
    if (read.format === 'fits-image') return { kind: 'image', observation: read.observation };
    const t = read.table;
    handlers.head({ format: read.format, columns: t.columns, units: t.columns.map((_, i) => t.units?.[i]) });
    for (let r = 0; r < t.rows.length; r++) {
      handlers.row(t.rows[r], t.lines?.[r]);
      if (r % 5000 === 4999) handlers.progress?.(r + 1);
    }
    return { kind: 'table', format: read.format, rowCount: t.rows.length };
  }

  let rows = 0;
  let format: TableHead['format'] = 'csv';
  let headerSeen = false;
  const stream = new DelimitedStream(
    {
      header: (h) => {
        checkTextHeader(file, h.header, h.headerLine);
        headerSeen = true;
        format = h.delimiter === '\t' ? 'tsv' : 'csv';
        handlers.head({ format, columns: h.header, units: h.units ?? h.header.map(() => undefined) });
      },
      row: (fields, line) => {
        rows++;
        handlers.row(fields, line);
        if (rows % 5000 === 0) handlers.progress?.(rows);
      },
    },
    { source: file },
  );
  const decoder = encoding === 'utf-8' ? new TextDecoder('utf-8', { fatal: true }) : null;
  const decode = (chunk: Buffer | undefined): string => {
    if (!decoder) return chunk ? chunk.toString('latin1') : '';
    try {
      return chunk ? decoder.decode(chunk, { stream: true }) : decoder.decode();
    } catch {
      throw new NotUtf8(`${file} is not UTF-8`);
    }
  };
  try {
    for await (const chunk of createReadStream(storedPath, { highWaterMark: PIECE })) stream.push(decode(chunk as Buffer));
    stream.push(decode(undefined));
    const h = stream.end();
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
