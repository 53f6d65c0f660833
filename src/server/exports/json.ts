// JSON download: {provenance, columns, rows}; rows are objects keyed by column name, numbers at
// full precision, missing values null. Written piece by piece so the rows are never held at once.
import { Chunker } from './columns';
import type { ExportSource } from './source';

export async function* jsonExport(src: ExportSource): AsyncGenerator<Uint8Array> {
  try {
    const out = new Chunker();
    const columns = src.columns.map((c) => ({ name: c.name, ...(c.unit ? { unit: c.unit } : {}), description: c.description }));
    out.push(`{"provenance":${JSON.stringify({ ...src.provenance, lines: src.lines })},\n"columns":${JSON.stringify(columns)},\n"rows":[`);
    let first = true;
    for (const row of src.rows()) {
      out.push(`${first ? '\n' : ',\n'}${JSON.stringify(row, (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? null : v))}`);
      first = false;
      if (out.full) yield out.take();
    }
    out.push('\n]}\n');
    yield out.take();
  } finally {
    src.close();
  }
}
