// Downloads of a campaign's catalogue: one format registry, one streamed Response. Each writer is
// an async generator of byte chunks over rows read one at a time (src/server/exports/source.ts),
// so a million-row download never sits in memory; the stream pulls the next chunk only when the
// client has taken the previous one.
import type { AppDatabase } from '../../db/client';
import type { ExportFormat } from '../../contracts/catalogue';
import type { CatalogueFilter } from '../catalogue';
import { csvExport } from './csv';
import { ecsvExport } from './ecsv';
import { fitsExport } from './fits';
import { jsonExport } from './json';
import { openExport, type ExportProvenance, type ExportSource } from './source';
import { votableExport } from './votable';

export const EXPORT_FORMATS = {
  csv: { write: csvExport, contentType: 'text/csv; charset=utf-8', extension: 'csv' },
  ecsv: { write: ecsvExport, contentType: 'text/x-ecsv; charset=utf-8', extension: 'ecsv' },
  votable: { write: votableExport, contentType: 'application/x-votable+xml; charset=utf-8', extension: 'vot' },
  fits: { write: fitsExport, contentType: 'application/fits', extension: 'fits' },
  json: { write: jsonExport, contentType: 'application/json; charset=utf-8', extension: 'json' },
} as const satisfies Record<ExportFormat, { write: (src: ExportSource) => AsyncGenerator<Uint8Array>; contentType: string; extension: string }>;

export type { ExportFormat };
export const EXPORT_FORMAT_NAMES = Object.keys(EXPORT_FORMATS) as ExportFormat[];

export function isExportFormat(s: string): s is ExportFormat {
  return Object.prototype.hasOwnProperty.call(EXPORT_FORMATS, s);
}

/** A file name from the campaign name: plain ASCII, no path characters. */
export function exportFileName(campaignName: string, format: ExportFormat, date = new Date()): string {
  const base = campaignName.normalize('NFKD').replace(/[^A-Za-z0-9]+/g, '-').replace(/^-+|-+$/g, '').toLowerCase().slice(0, 60) || 'catalogue';
  return `${base}-catalogue-${date.toISOString().slice(0, 10)}.${EXPORT_FORMATS[format].extension}`;
}

/** The bytes of a download, chunk by chunk (tests read them whole; the route streams them). */
export function exportChunks(db: AppDatabase, campaign: { id: string; name: string }, filter: CatalogueFilter, format: ExportFormat, at?: { now: Date; release?: ExportProvenance['release'] }): AsyncGenerator<Uint8Array> {
  return EXPORT_FORMATS[format].write(openExport(db, campaign, filter, at?.now, at?.release));
}

/** A whole download in memory (releases freeze their files this way). */
export async function exportBytes(db: AppDatabase, campaign: { id: string; name: string }, filter: CatalogueFilter, format: ExportFormat, at?: { now: Date; release?: ExportProvenance['release'] }): Promise<Buffer> {
  const parts: Uint8Array[] = [];
  for await (const c of exportChunks(db, campaign, filter, format, at)) parts.push(c);
  return Buffer.concat(parts);
}

export function exportResponse(db: AppDatabase, campaign: { id: string; name: string }, filter: CatalogueFilter, format: ExportFormat): Response {
  const source = openExport(db, campaign, filter);
  const chunks = EXPORT_FORMATS[format].write(source);
  const stream = new ReadableStream<Uint8Array>({
    async pull(controller) {
      try {
        const next = await chunks.next();
        if (next.done) controller.close();
        else controller.enqueue(next.value);
      } catch (err) {
        controller.error(err);
      }
    },
    async cancel() {
      // The client went away: the generator's finally blocks close the export's connection.
      await chunks.return(undefined);
      source.close();
    },
  });
  const name = exportFileName(campaign.name, format);
  return new Response(stream, {
    status: 200,
    headers: {
      'content-type': EXPORT_FORMATS[format].contentType,
      'content-disposition': `attachment; filename="${name}"`,
      'cache-control': 'no-store',
    },
  });
}
