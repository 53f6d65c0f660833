// `npm run bench -- --only readers`: how long the readers take and how much memory a read table
// holds per cell (the figure behind INPUT_MAX_CELLS, docs/decisions/0018-input-limits.md), for a
// generated CSV, VOTable and FITS table of invented stars.
//   --rows <n>   rows per table (default 500 000; the VOTable gets a fifth of them)
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { readUpload } from '../src/core/input/table-file';
import { bintableHeader, card, data, primary } from '../tests/support/hostile-fits';

setFlagsFromString('--expose_gc');
const gc = runInNewContext('gc') as () => void;

const at = process.argv.indexOf('--rows');
const ROWS = at >= 0 ? Number(process.argv[at + 1]) : 500_000;
const COLS = 10;
const names = ['id', 'V', 'V_err', 'B', 'B_err', 'Ks', 'Ks_err', 'ra', 'dec', 'parallax_mas'];
const value = (r: number, c: number) => (c === 0 ? `ember-${r + 1}` : (9 + c * 0.137 + r * 1e-6).toFixed(4));

function csv(rows: number): Uint8Array {
  const parts = [names.join(',') + '\n'];
  for (let r = 0; r < rows; r++) parts.push(names.map((_, c) => value(r, c)).join(',') + '\n');
  return new TextEncoder().encode(parts.join(''));
}

function votable(rows: number): Uint8Array {
  const parts = ['<?xml version="1.0"?>\n<VOTABLE version="1.4"><RESOURCE><TABLE>\n', ...names.map((n, c) => `<FIELD name="${n}" datatype="${c === 0 ? 'char" arraysize="*' : 'double'}"/>\n`), '<DATA><TABLEDATA>\n'];
  for (let r = 0; r < rows; r++) parts.push(`<TR>${names.map((_, c) => `<TD>${value(r, c)}</TD>`).join('')}</TR>\n`);
  parts.push('</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>\n');
  return new TextEncoder().encode(parts.join(''));
}

function fits(rows: number): Uint8Array {
  const width = 16 + (COLS - 1) * 8;
  const body = Buffer.alloc(rows * width);
  for (let r = 0; r < rows; r++) {
    body.write(value(r, 0).padEnd(16, ' '), r * width, 'latin1');
    for (let c = 1; c < COLS; c++) body.writeDoubleBE(Number(value(r, c)), r * width + 16 + (c - 1) * 8);
  }
  const columns = names.map((n, c) => [card(`TTYPE${c + 1}`, n), card(`TFORM${c + 1}`, c === 0 ? '16A' : 'D')]);
  return new Uint8Array(Buffer.concat([primary(), bintableHeader(width, rows, columns), data(body)]));
}

function measure(label: string, bytes: Uint8Array, file: string, rows: number): void {
  gc();
  const before = process.memoryUsage().heapUsed;
  const started = performance.now();
  const read = readUpload(bytes, file);
  const ms = performance.now() - started;
  gc();
  const held = process.memoryUsage().heapUsed - before;
  const cells = rows * COLS;
  const n = read.format === 'fits-image' ? 0 : read.table.rows.length;
  console.log(
    `${label.padEnd(8)} ${(bytes.length / 1e6).toFixed(1).padStart(6)} MB  ${n} rows × ${COLS}  read in ${(ms / 1000).toFixed(2)} s  ` +
      `(${Math.round(cells / (ms / 1000)).toLocaleString('en')} cells/s)  table held: ${(held / 1e6).toFixed(0)} MB, ${(held / cells).toFixed(0)} bytes per cell`,
  );
}

measure('CSV', csv(ROWS), 'bench.csv', ROWS);
measure('VOTable', votable(Math.round(ROWS / 5)), 'bench.vot', Math.round(ROWS / 5));
measure('FITS', fits(ROWS), 'bench.fits', ROWS);
