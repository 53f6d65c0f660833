// FITS download (FITS Standard 4.0): an empty primary HDU carrying the provenance in keywords and
// COMMENT/HISTORY cards, then a BINTABLE extension (section 7.3) with TTYPE/TFORM/TUNIT per column.
// NAXIS2 must be known before the first row is written: the count comes from the same read
// transaction as the rows (src/server/exports/source.ts). Rows are packed a block group at a time
// and the data unit is padded to a multiple of 2880 bytes with zeros (section 3.3.2).
// Text columns are fixed-width 'A' fields as wide as the widest value, padded with NUL (7.3.3.1);
// missing doubles are NaN (IEEE NaN is the null value of E/D columns, section 7.3.3.1 and 5.3).
import { Chunker, columnMeta, type ColumnMeta } from './columns';
import type { ExportSource } from './source';
import type { CatalogueColumn } from '../../core/catalogue';

export const FITS_BLOCK = 2880;

const ASCII_MAP: Record<string, string> = {
  'σ': 'sigma', 'χ': 'chi', 'θ': 'theta', 'ϖ': 'parallax', 'λ': 'lambda', 'ν': 'nu', 'µ': 'u', 'μ': 'u', '☉': 'sun',
  '²': '2', '³': '3', '⁴': '4', '¹': '1', '⁻': '-', '⁰': '0', '≥': '>=', '≤': '<=', '–': '-', '—': '-', '−': '-', '×': 'x',
  '√': 'sqrt', '…': '...', '’': "'", '‘': "'", '“': '"', '”': '"', 'Å': 'A', '°': 'deg', '±': '+/-', '·': '.',
};

/** Header text is printable ASCII only (section 4.2.1): common symbols spelled out, accents dropped. */
export function fitsAscii(s: string): string {
  let out = '';
  for (const ch of s) {
    if (ch >= ' ' && ch <= '~') out += ch;
    else if (ASCII_MAP[ch]) out += ASCII_MAP[ch];
    else {
      const base = ch.normalize('NFKD').replace(/[^\x20-\x7e]/g, '');
      out += base || '?';
    }
  }
  return out;
}

type CardValue = string | number | boolean;

function formatValue(v: CardValue): string {
  if (typeof v === 'boolean') return (v ? 'T' : 'F').padStart(20);
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new Error('FITS header values must be finite numbers');
    const s = Number.isInteger(v) && Math.abs(v) < 1e15 ? String(v) : v.toExponential().toUpperCase();
    return s.padStart(20);
  }
  // Fixed-format string: quote at column 11, at least 8 characters inside, quotes doubled (4.2.1.1).
  const inner = fitsAscii(v).replace(/'/g, "''").slice(0, 68);
  return `'${inner.padEnd(8)}'`;
}

export function card(keyword: string, value: CardValue, comment?: string): string {
  let c = `${keyword.padEnd(8)}= ${formatValue(value)}`;
  if (comment) c += ` / ${fitsAscii(comment)}`;
  return c.slice(0, 80).padEnd(80);
}

/** COMMENT or HISTORY cards: the text wrapped at 72 characters. */
export function commentary(keyword: 'COMMENT' | 'HISTORY', text: string): string[] {
  const t = fitsAscii(text);
  const cards: string[] = [];
  for (let i = 0; i < Math.max(1, t.length); i += 72) cards.push(`${keyword.padEnd(8)}${t.slice(i, i + 72)}`.padEnd(80));
  return cards;
}

function headerBlock(cards: string[]): string {
  const all = [...cards, 'END'.padEnd(80)].join('');
  return all.padEnd(Math.ceil(all.length / FITS_BLOCK) * FITS_BLOCK, ' ');
}

interface Field {
  column: CatalogueColumn;
  meta: ColumnMeta;
  width: number;
  tform: string;
}

export async function* fitsExport(src: ExportSource): AsyncGenerator<Uint8Array> {
  try {
    const p = src.provenance;
    const main = p.batches[0];
    const date = p.createdAt.slice(0, 19);
    const primary = [
      card('SIMPLE', true, 'conforms to the FITS standard'),
      card('BITPIX', 8),
      card('NAXIS', 0),
      card('EXTEND', true, 'the catalogue is in the next HDU'),
      card('ORIGIN', 'Starkiln', 'stellar Teff, radius, luminosity from photometry'),
      card('DATE', date, 'file written (UTC)'),
      card('SOFTVER', p.software.version, 'Starkiln software version'),
      card('BANDLIB', p.bandLibraryVersions.join(' ') || 'none', 'band library version(s) of the fits'),
      ...(main ? [card('EXTLAW', main.law, 'extinction law (batch with most rows)'), card('RV', main.rv, 'R_V of that batch')] : []),
      card('CAMPAIGN', p.campaign.name),
      card('CAMPID', p.campaign.id, 'campaign id in Starkiln'),
      card('NROWS', src.count, 'rows in the catalogue table'),
      ...p.batches.flatMap((b) => commentary('HISTORY', `fit batch ${b.id} started ${b.startedAt}: ${b.rows} rows, software ${b.softwareVersion}, band library ${b.bandLibraryVersion}, law ${b.law}, R_V ${b.rv}`)),
      ...src.lines.flatMap((l) => commentary('COMMENT', l)),
    ];
    const fields: Field[] = src.columns.map((column) => {
      const meta = columnMeta(column);
      if (meta.kind === 'double') return { column, meta, width: 8, tform: 'D' };
      if (meta.kind === 'int') return { column, meta, width: 4, tform: 'J' };
      const width = src.maxBytes[column.name as keyof ExportSource['maxBytes']] ?? 64;
      return { column, meta, width, tform: `${width}A` };
    });
    const rowBytes = fields.reduce((a, f) => a + f.width, 0);
    const table = [
      card('XTENSION', 'BINTABLE', 'binary table extension'),
      card('BITPIX', 8),
      card('NAXIS', 2),
      card('NAXIS1', rowBytes, 'bytes per row'),
      card('NAXIS2', src.count, 'rows'),
      card('PCOUNT', 0),
      card('GCOUNT', 1),
      card('TFIELDS', fields.length),
      ...fields.flatMap((f, i) => [
        card(`TTYPE${i + 1}`, f.column.name, f.column.description),
        card(`TFORM${i + 1}`, f.tform),
        ...(f.meta.fitsUnit ? [card(`TUNIT${i + 1}`, f.meta.fitsUnit)] : []),
      ]),
      card('EXTNAME', 'CATALOGUE'),
      card('SOFTVER', p.software.version),
      card('BANDLIB', p.bandLibraryVersions.join(' ') || 'none'),
      card('DATE', date),
      ...commentary('COMMENT', `selection: ${p.selection}`),
      ...commentary('COMMENT', 'Provenance, zero-points, column meanings and flags: see the COMMENT cards of the primary HDU.'),
    ];
    const text = new Chunker();
    text.push(headerBlock(primary));
    text.push(headerBlock(table));
    yield text.take();

    const encoder = new TextEncoder();
    const rowsPerChunk = Math.max(1, Math.floor((64 * 1024) / Math.max(1, rowBytes)));
    let buf = new Uint8Array(rowsPerChunk * rowBytes);
    let view = new DataView(buf.buffer);
    let inChunk = 0;
    let written = 0;
    for (const row of src.rows()) {
      let pos = inChunk * rowBytes;
      for (const f of fields) {
        const v = row[f.column.name];
        if (f.meta.kind === 'double') view.setFloat64(pos, typeof v === 'number' ? v : NaN);
        else if (f.meta.kind === 'int') view.setInt32(pos, typeof v === 'number' ? v : 0);
        else {
          const bytes = encoder.encode(v === null || v === undefined ? '' : String(v));
          buf.fill(0, pos, pos + f.width);
          buf.set(bytes.subarray(0, f.width), pos);
        }
        pos += f.width;
      }
      inChunk++;
      written++;
      if (inChunk === rowsPerChunk) {
        yield buf;
        buf = new Uint8Array(rowsPerChunk * rowBytes);
        view = new DataView(buf.buffer);
        inChunk = 0;
      }
    }
    if (written !== src.count) throw new Error(`FITS export: counted ${src.count} rows but read ${written}`);
    if (inChunk > 0) yield buf.slice(0, inChunk * rowBytes);
    const dataBytes = written * rowBytes;
    const pad = (FITS_BLOCK - (dataBytes % FITS_BLOCK)) % FITS_BLOCK;
    if (pad) yield new Uint8Array(pad);
  } finally {
    src.close();
  }
}
