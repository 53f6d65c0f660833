// Catalogue releases: an analyst (or an admin) declares the accepted catalogue ready. The release
// records what it held — the filter, the row count, the band library and software versions — and
// every collaborator of the campaign gets one e-mail through the outbox, written in the same
// transaction as the release, so a release never exists without its notices or the reverse.
// The downloads of a release apply its filter to the current catalogue: a re-fit or review after
// the release changes what they return; the recorded row count and versions show that it changed.
import { and, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { campaignMemberRoles, catalogueReleases, user } from '../db/schema';
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
    'Browse it and download it as CSV, VOTable, FITS or JSON here:',
    input.link,
  ].join('\n');
  const html = `<p>Hello ${escapeHtml(input.name)},</p>
<p>${escapeHtml(input.releasedBy)} released the catalogue <strong>${escapeHtml(input.title)}</strong> of the campaign <strong>${escapeHtml(input.campaignName)}</strong> on Starkiln: ${input.rowCount} stars.</p>
${input.note ? `<p>${escapeHtml(input.note).replace(/\n/g, '<br>')}</p>` : ''}
<p><a href="${escapeHtml(input.link)}">Browse and download it</a> as CSV, VOTable, FITS or JSON.</p>`;
  return { kind: 'notice', to: input.to, subject: `Catalogue released: ${input.title} (${input.campaignName})`, text, html };
}

type ReleaseRow = typeof catalogueReleases.$inferSelect;

function view(r: ReleaseRow, by: { id: string; name: string } | null, notified: number): ReleaseView {
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
  };
}

export function listReleases(db: AppDatabase, campaignId: string): ReleaseView[] {
  const rows = db
    .select({ r: catalogueReleases, byId: user.id, byName: user.name })
    .from(catalogueReleases)
    .leftJoin(user, eq(user.id, catalogueReleases.releasedById))
    .where(eq(catalogueReleases.campaignId, campaignId))
    .orderBy(desc(catalogueReleases.createdAt))
    .all();
  return rows.map(({ r, byId, byName }) => view(r, byId ? { id: byId, name: byName ?? '' } : null, Number((r.filter as { notified?: number }).notified ?? 0)));
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
  const { total } = catalogueCount(db, campaign.id, filter);
  if (total === 0) throw new HttpError('conflict', `There is nothing to release: no star matches ${describeFilter(filter)}.`, 'query');
  const versions = db.$client
    .prepare("SELECT DISTINCT band_library_version FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'accepted' ORDER BY 1")
    .pluck()
    .all(campaign.id) as string[];
  const id = newId();
  const link = `${env.baseUrl}/campaigns/${encodeURIComponent(campaign.id)}/catalogue?release=${id}`;
  const people = collaborators(db, campaign.id);
  // Composing is async; the records go in with the release, in one transaction.
  const mails = await Promise.all(
    people.map((p) => mailer.prepare(releaseMail({ to: p.email, name: p.name, campaignName: campaign.name, title: input.title, note: input.note, rowCount: total, releasedBy: actor.name, link }))),
  );
  const outboxIds: number[] = [];
  db.transaction((tx) => {
    tx.insert(catalogueReleases)
      .values({
        id,
        campaignId: campaign.id,
        title: input.title,
        note: input.note,
        filter: { query, notified: people.length },
        rowCount: total,
        bandLibraryVersion: versions.join(' ') || 'none',
        softwareVersion: appVersion(),
        releasedById: actor.id,
      })
      .run();
    for (const m of mails) outboxIds.push(mailer.record(tx, m));
    recordAudit(tx, { actorId: actor.id, action: 'catalogue.released', campaignId: campaign.id, details: { releaseId: id, title: input.title, rows: total, query, notified: people.length } });
  }, { behavior: 'immediate' });
  for (const o of outboxIds) await mailer.dispatch(db, o);
  return listReleases(db, campaign.id).find((r) => r.id === id)!;
}
