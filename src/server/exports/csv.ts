// CSV download: the provenance as leading '# ' lines, then the same header and line format as the
// CLI (src/core/catalogue.ts), rows streamed from the export's own read transaction.
import { catalogueCsvHeader, catalogueCsvLine } from '../../core/catalogue';
import { Chunker, oneLine } from './columns';
import type { ExportSource } from './source';

export async function* csvExport(src: ExportSource): AsyncGenerator<Uint8Array> {
  try {
    const out = new Chunker();
    for (const l of src.lines) out.push(`# ${oneLine(l)}\n`);
    out.push(`${catalogueCsvHeader(src.columns)}\n`);
    for (const row of src.rows()) {
      out.push(`${catalogueCsvLine(row, src.columns)}\n`);
      if (out.full) yield out.take();
    }
    yield out.take();
  } finally {
    src.close();
  }
}
