// ECSV download: the core writer (src/core/ecsv.ts) with the export's columns, their units as in
// the FITS download, and the provenance (and its plain lines) as table metadata. astropy reads it
// with `Table.read(path)` and no options, units attached.
import { ecsvColumns, ecsvHeader, ecsvLine } from '../../core/ecsv';
import { Chunker, columnMeta } from './columns';
import type { ExportSource } from './source';

export async function* ecsvExport(src: ExportSource): AsyncGenerator<Uint8Array> {
  try {
    const out = new Chunker();
    const columns = ecsvColumns(src.columns).map((c, i) => {
      const unit = columnMeta(src.columns[i]).fitsUnit;
      return { name: c.name, datatype: c.datatype, description: c.description, ...(unit ? { unit } : {}) };
    });
    out.push(ecsvHeader(columns, { provenance: src.provenance, comments: src.lines }));
    for (const row of src.rows()) {
      out.push(ecsvLine(row, columns));
      if (out.full) yield out.take();
    }
    yield out.take();
  } finally {
    src.close();
  }
}
