// Catalogue releases: an analyst (or an admin) declares the catalogue ready. A release is frozen
// (decision record 0021): its rows (one per star, with the batch that made the fit), the files of
// every download format byte for byte with their SHA-256, and the provenance (batches with their
// options, band library and software versions, zero-points) are written once, with a stable id and
// address, and never change — a later re-fit or review does not touch them. Releases made before
// freezing existed keep only their filter and say so. Every collaborator of the campaign gets one
// e-mail through the outbox, written in the same transaction as the release. Two releases can be
// compared: stars added, removed and changed (which columns, old and new values).
import { createHash } from 'node:crypto';
import { and, asc, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { campaignMemberRoles, catalogueReleases, releaseFiles, releaseRows, user } from '../db/schema';
import { EXPORT_FORMATS, EXPORT_FORMAT_NAMES, exportBytes, exportFileName, type ExportFormat } from './exports';
import { openExport } from './exports/source';
import type { MailMessage } from '../adapters/mail';
import { recordAudit } from './audit';
import { catalogueCount, catalogueFilterFromQuery, describeFilter, filterToParams, type CatalogueFilter } from './catalogue';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';
import { appVersion } from './health';
import { newId } from './ids';
import { parseInput } from './validation';

export interface ReleaseView {
  id: string;
  campaignId: string;
  title: string;
  note: string;
  /** Query string of the release's filter, for …/catalogue and …/downloads/:format. */
  query: string;
  selection: string;
  rowCount: number;
  bandLibraryVersion: string;
  softwareVersion: string;
  releasedBy: { id: string; name: string } | null;
  createdAt: string;
  notified: number;
  /** Frozen: rows and files kept as released. False only for releases made before freezing existed. */
  frozen: boolean;
  /** The release's own page, to cite. */
  address: string;
  files: { format: string; fileName: string; sha256: string; sizeBytes: number; url: string }[];
}

export interface ReleaseComparison {
  from: { id: string; title: string; createdAt: string; rows: number };
  to: { id: string; title: string; createdAt: string; rows: number };
  added: string[];
  removed: string[];
  changed: { starKey: string; batchFrom: string | null; batchTo: string | null; columns: { name: string; from: string | number | null; to: string | number | null }[] }[];
  unchanged: number;
}

export const releaseInput = z.object({
  title: z.string({ error: 'title is required.' }).trim().min(3, 'A release title needs at least 3 characters.').max(120, 'A release title can have at most 120 characters.'),
  note: z.string({ error: 'note must be text.' }).max(4000, 'The note can have at most 4000 characters.').optional().transform((s) => (s ?? '').trim()),
  /** Query string of the catalogue filter; default: the accepted catalogue. */
  query: z.string({ error: 'query must be a query string such as status=accepted.' }).max(2000).optional(),
});

function escapeHtml(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

export function releaseMail(input: { to: string; name: string; campaignName: string; title: string; note: string; rowCount: number; releasedBy: string; link: string }): MailMessage {
  const text = [
    `Hello ${input.name},`,
    '',
    `${input.releasedBy} released the catalogue "${input.title}" of the campaign "${input.campaignName}" on Starkiln: ${input.rowCount} stars.`,
    ...(input.note ? ['', input.note] : []),
    '',
    'Browse it and download it here (its files never change; cite this address):',
    input.link,
  ].join('\n');
  const html = `<p>Hello ${escapeHtml(input.name)},</p>
<p>${escapeHtml(input.releasedBy)} released the catalogue <strong>${escapeHtml(input.title)}</strong> of the campaign <strong>${escapeHtml(input.campaignName)}</strong> on Starkiln: ${input.rowCount} stars.</p>
${input.note ? `<p>${escapeHtml(input.note).replace(/\n/g, '<br>')}</p>` : ''}
<p><a href="${escapeHtml(input.link)}">Browse and download it</a> as CSV, ECSV, VOTable, FITS or JSON. Its files never change: cite this address.</p>`;
  return { kind: 'notice', to: input.to, subject: `Catalogue released: ${input.title} (${input.campaignName})`, text, html };
}

type ReleaseRow = typeof catalogueReleases.$inferSelect;

export function releasePath(campaignId: string, releaseId: string): string {
  return `/campaigns/${encodeURIComponent(campaignId)}/releases/${encodeURIComponent(releaseId)}`;
}

export function releaseFileUrl(campaignId: string, releaseId: string, format: string): string {
  return `/api/campaigns/${encodeURIComponent(campaignId)}/releases/${encodeURIComponent(releaseId)}/files/${encodeURIComponent(format)}`;
}

function view(r: ReleaseRow, by: { id: string; name: string } | null, notified: number, files: ReleaseView['files'] = []): ReleaseView {
  const filter = r.filter as { query?: string };
  const query = filter.query ?? 'status=accepted';
  return {
    id: r.id,
    campaignId: r.campaignId,
    title: r.title,
    note: r.note,
    query,
    selection: describeFilter(catalogueFilterFromQuery(query)),
    rowCount: r.rowCount,
    bandLibraryVersion: r.bandLibraryVersion,
    softwareVersion: r.softwareVersion,
    releasedBy: by,
    createdAt: r.createdAt.toISOString(),
    notified,
    frozen: r.frozen,
    address: releasePath(r.campaignId, r.id),
    files,
  };
}

function filesOf(db: AppDatabase, r: ReleaseRow): ReleaseView['files'] {
  return db
    .select({ format: releaseFiles.format, fileName: releaseFiles.fileName, sha256: releaseFiles.sha256, sizeBytes: releaseFiles.sizeBytes })
    .from(releaseFiles)
    .where(eq(releaseFiles.releaseId, r.id))
    .orderBy(asc(releaseFiles.format))
    .all()
    .map((f) => ({ ...f, url: releaseFileUrl(r.campaignId, r.id, f.format) }));
}

export function listReleases(db: AppDatabase, campaignId: string): ReleaseView[] {
  const rows = db
    .select({ r: catalogueReleases, byId: user.id, byName: user.name })
    .from(catalogueReleases)
    .leftJoin(user, eq(user.id, catalogueReleases.releasedById))
    .where(eq(catalogueReleases.campaignId, campaignId))
    .orderBy(desc(catalogueReleases.createdAt))
    .all();
  return rows.map(({ r, byId, byName }) => view(r, byId ? { id: byId, name: byName ?? '' } : null, Number((r.filter as { notified?: number }).notified ?? 0), filesOf(db, r)));
}

/** One release of the campaign, or 404. */
export function getRelease(db: AppDatabase, campaignId: string, releaseId: string): ReleaseView & { provenance: Record<string, unknown> | null } {
  const row = db
    .select({ r: catalogueReleases, byId: user.id, byName: user.name })
    .from(catalogueReleases)
    .leftJoin(user, eq(user.id, catalogueReleases.releasedById))
    .where(and(eq(catalogueReleases.id, releaseId), eq(catalogueReleases.campaignId, campaignId)))
    .get();
  if (!row) throw new HttpError('not_found', 'No release with that id in this campaign.');
  const { r, byId, byName } = row;
  return { ...view(r, byId ? { id: byId, name: byName ?? '' } : null, Number((r.filter as { notified?: number }).notified ?? 0), filesOf(db, r)), provenance: r.provenance ?? null };
}

/** A frozen file of a release, as stored. */
export function releaseFile(db: AppDatabase, campaignId: string, releaseId: string, format: string): { fileName: string; contentType: string; sha256: string; content: Buffer } {
  const release = getRelease(db, campaignId, releaseId);
  if (!release.frozen) throw new HttpError('not_found', 'This release was made before releases were frozen: it has no files of its own. Its filter is applied to the current catalogue on the catalogue page.');
  const f = db.select().from(releaseFiles).where(and(eq(releaseFiles.releaseId, releaseId), eq(releaseFiles.format, format))).get();
  if (!f) throw new HttpError('not_found', `This release has no ${format} file; it has ${release.files.map((x) => x.format).join(', ')}.`);
  return { fileName: f.fileName, contentType: f.contentType, sha256: f.sha256, content: f.content };
}

/** Stars added, removed and changed from release `fromId` to release `toId` (both of the campaign, both frozen). */
export function compareReleases(db: AppDatabase, campaignId: string, fromId: string, toId: string): ReleaseComparison {
  const a = getRelease(db, campaignId, fromId);
  const b = getRelease(db, campaignId, toId);
  for (const r of [a, b]) if (!r.frozen) throw new HttpError('conflict', `Release "${r.title}" was made before releases were frozen; it kept no rows to compare.`);
  const rowsOf = (id: string) =>
    new Map(db.select().from(releaseRows).where(eq(releaseRows.releaseId, id)).all().map((r) => [r.starKey, r]));
  const ra = rowsOf(a.id);
  const rb = rowsOf(b.id);
  const added = [...rb.keys()].filter((k) => !ra.has(k)).sort();
  const removed = [...ra.keys()].filter((k) => !rb.has(k)).sort();
  const changed: ReleaseComparison['changed'] = [];
  let unchanged = 0;
  for (const [k, x] of ra) {
    const y = rb.get(k);
    if (!y) continue;
    const names = [...new Set([...Object.keys(x.values), ...Object.keys(y.values)])];
    const columns = names.filter((n) => (x.values[n] ?? null) !== (y.values[n] ?? null)).map((n) => ({ name: n, from: x.values[n] ?? null, to: y.values[n] ?? null }));
    if (columns.length) changed.push({ starKey: k, batchFrom: x.batchId, batchTo: y.batchId, columns });
    else unchanged++;
  }
  changed.sort((p, q) => (p.starKey < q.starKey ? -1 : p.starKey > q.starKey ? 1 : 0));
  const brief = (r: ReleaseView) => ({ id: r.id, title: r.title, createdAt: r.createdAt, rows: r.rowCount });
  return { from: brief(a), to: brief(b), added, removed, changed, unchanged };
}

function catalogueVersion(db: AppDatabase, campaignId: string): number {
  return (db.$client.prepare('SELECT version FROM catalogue_versions WHERE campaign_id = ?').pluck().get(campaignId) as number | undefined) ?? 0;
}

/** The collaborators of a campaign (people holding that role there). */
function collaborators(db: AppDatabase, campaignId: string): { id: string; name: string; email: string }[] {
  return db
    .select({ id: user.id, name: user.name, email: user.email })
    .from(campaignMemberRoles)
    .innerJoin(user, eq(user.id, campaignMemberRoles.userId))
    .where(and(eq(campaignMemberRoles.campaignId, campaignId), eq(campaignMemberRoles.role, 'collaborator')))
    .all();
}

export async function createRelease(app: AppServices, actor: Actor, campaign: { id: string; name: string }, raw: unknown): Promise<ReleaseView> {
  const { db, mailer, env } = app;
  const input = parseInput(releaseInput, raw);
  const filter: CatalogueFilter = catalogueFilterFromQuery(input.query ?? 'status=accepted');
  const query = filterToParams(filter).toString();
  const id = newId();
  const address = `${env.baseUrl}${releasePath(campaign.id, id)}`;
  const people = collaborators(db, campaign.id);
  const outboxIds: number[] = [];
  // The files are written outside the write lock (they can be large); the catalogue's stamp, read
  // before and checked again inside the write transaction, proves nothing changed meanwhile —
  // otherwise the snapshot is taken again (a worker finishing a fit, a decision landing).
  for (let attempt = 1; ; attempt++) {
    const stamp = catalogueVersion(db, campaign.id);
    const { total } = catalogueCount(db, campaign.id, filter);
    if (total === 0) throw new HttpError('conflict', `There is nothing to release: no star matches ${describeFilter(filter)}.`, 'query');
    const now = new Date();
    const at = { now, release: { id, title: input.title, address } };
    const files: { format: ExportFormat; fileName: string; contentType: string; sha256: string; content: Buffer }[] = [];
    for (const format of EXPORT_FORMAT_NAMES) {
      const content = await exportBytes(db, campaign, filter, format, at);
      files.push({ format, fileName: exportFileName(campaign.name, format, now).replace('-catalogue-', `-release-${id}-`), contentType: EXPORT_FORMATS[format].contentType, sha256: createHash('sha256').update(content).digest('hex'), content });
    }
    const source = openExport(db, campaign, filter, now, at.release);
    const provenance = source.provenance as unknown as Record<string, unknown>;
    const rows: { starKey: string; batchId: string | null; values: Record<string, string | number | null> }[] = [];
    try {
      for (const row of source.rows()) rows.push({ starKey: String(row.id), batchId: (row.batch_id as string | null) ?? null, values: row });
    } finally {
      source.close();
    }
    const versions = [...new Set((provenance.bandLibraryVersions as string[] | undefined) ?? [])].sort();
    const mails = await Promise.all(
      people.map((p) => mailer.prepare(releaseMail({ to: p.email, name: p.name, campaignName: campaign.name, title: input.title, note: input.note, rowCount: rows.length, releasedBy: actor.name, link: address }))),
    );
    const written = db.transaction((tx) => {
      if (catalogueVersion(db, campaign.id) !== stamp) return false;
      tx.insert(catalogueReleases)
        .values({
          id,
          campaignId: campaign.id,
          title: input.title,
          note: input.note,
          filter: { query, notified: people.length },
          rowCount: rows.length,
          bandLibraryVersion: versions.join(' ') || 'none',
          softwareVersion: appVersion(),
          releasedById: actor.id,
          createdAt: now,
          frozen: true,
          provenance,
        })
        .run();
      for (const f of files) tx.insert(releaseFiles).values({ releaseId: id, format: f.format, fileName: f.fileName, contentType: f.contentType, sha256: f.sha256, sizeBytes: f.content.length, content: f.content }).run();
      for (let i = 0; i < rows.length; i += 500) tx.insert(releaseRows).values(rows.slice(i, i + 500).map((r) => ({ releaseId: id, ...r }))).run();
      for (const m of mails) outboxIds.push(mailer.record(tx, m));
      recordAudit(tx, { actorId: actor.id, action: 'catalogue.released', campaignId: campaign.id, details: { releaseId: id, title: input.title, rows: rows.length, query, notified: people.length, files: Object.fromEntries(files.map((f) => [f.format, f.sha256])) } });
      return true;
    }, { behavior: 'immediate' });
    if (written) break;
    if (attempt >= 5) throw new HttpError('conflict', 'The catalogue kept changing while the release was written (fits or decisions landing); try again when the batch has finished.');
  }
  for (const o of outboxIds) await mailer.dispatch(db, o);
  return getRelease(db, campaign.id, id);
}
