// Campaign use cases: create, list, open, add members. Callers check who may call them
// (src/web/guards.ts); these functions enforce the rules that hold whoever calls.
import { and, asc, count, desc, eq, gt, inArray, isNull, lte } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase, DbOrTx } from '../db/client';
import { campaignMemberRoles, campaignMembers, campaigns, invitations, user } from '../db/schema';
import type { AddMemberResult, CampaignMember, CampaignOverview, CampaignSummary, PendingInvitation } from '../contracts/api';
import { CAMPAIGN_ROLES, canCreateCampaigns, type CampaignRole } from '../contracts/vocabulary';
import { recordAudit } from './audit';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';
import { hashToken, newId, newToken } from './ids';
import { invitationMail } from '../adapters/mail-templates';
import { isUniqueViolation } from './sqlite-errors';
import { parseInput } from './validation';

export const INVITATION_DAYS = 14;

const collapse = (s: string) => s.trim().replace(/\s+/g, ' ');

export const campaignInput = z.object({
  name: z
    .string({ error: 'name is required.' })
    .transform(collapse)
    .pipe(
      z
        .string()
        .min(3, 'A campaign name needs at least 3 characters.')
        .max(80, 'A campaign name can have at most 80 characters.'),
    ),
  description: z
    .string({ error: 'description must be text.' })
    .max(2000, 'The description can have at most 2000 characters.')
    .optional()
    .transform((s) => (s ?? '').trim()),
});
export type CampaignInput = z.input<typeof campaignInput>;

export const memberInput = z.object({
  email: z
    .string({ error: 'email is required.' })
    .trim()
    .toLowerCase()
    .pipe(z.email('Enter a valid e-mail address, such as name@example.org.')),
  roles: z
    .array(z.enum(CAMPAIGN_ROLES, `Roles are ${CAMPAIGN_ROLES.join(', ')}.`), { error: 'roles must be a list.' })
    .min(1, 'Choose at least one role.')
    .transform((roles) => CAMPAIGN_ROLES.filter((r) => roles.includes(r))),
});
export type MemberInput = z.input<typeof memberInput>;

export function nameKey(name: string): string {
  return collapse(name).toLowerCase();
}

const iso = (d: Date) => d.toISOString();

/** The roles a user holds in a campaign (empty when not a member). */
export function getCampaignRoles(db: DbOrTx, campaignId: string, userId: string): CampaignRole[] {
  const rows = db
    .select({ role: campaignMemberRoles.role })
    .from(campaignMemberRoles)
    .where(and(eq(campaignMemberRoles.campaignId, campaignId), eq(campaignMemberRoles.userId, userId)))
    .all();
  return CAMPAIGN_ROLES.filter((r) => rows.some((row) => row.role === r));
}

export function getCampaign(db: DbOrTx, campaignId: string) {
  return db.select().from(campaigns).where(eq(campaigns.id, campaignId)).get() ?? null;
}

/** Every campaign's id and name, by name (the admin's invitation form offers them all). */
export function listAllCampaignNames(db: DbOrTx): { id: string; name: string }[] {
  return db.select({ id: campaigns.id, name: campaigns.name }).from(campaigns).orderBy(asc(campaigns.name)).all();
}

export function createCampaign(db: AppDatabase, actor: Actor, raw: unknown): CampaignSummary {
  if (!canCreateCampaigns(actor.kind)) {
    throw new HttpError('forbidden', 'Guest accounts cannot create campaigns. Ask a team member to create one and invite you.');
  }
  const input = parseInput(campaignInput, raw);
  const key = nameKey(input.name);
  const duplicate = () =>
    new HttpError('conflict', `A campaign named "${input.name}" already exists. Choose another name.`, 'name');
  if (db.select({ id: campaigns.id }).from(campaigns).where(eq(campaigns.nameKey, key)).get()) throw duplicate();
  const id = newId();
  try {
    db.transaction((tx) => {
      tx.insert(campaigns).values({ id, name: input.name, nameKey: key, description: input.description, createdById: actor.id }).run();
      tx.insert(campaignMembers).values({ campaignId: id, userId: actor.id, addedById: actor.id }).run();
      tx.insert(campaignMemberRoles).values({ campaignId: id, userId: actor.id, role: 'analyst' }).run();
      recordAudit(tx, { actorId: actor.id, action: 'campaign.created', campaignId: id, details: { name: input.name } });
    }, { behavior: 'immediate' });
  } catch (err) {
    if (isUniqueViolation(err)) throw duplicate();
    throw err;
  }
  const created = getCampaign(db, id)!;
  return { id, name: created.name, description: created.description, createdAt: iso(created.createdAt), archivedAt: null, myRoles: ['analyst'], memberCount: 1 };
}

/**
 * The campaigns a person sees: those they are a member of, and for an admin every campaign (an
 * admin oversees them all, with no role of their own unless added). Archived ones carry archivedAt.
 */
export function listCampaignsForUser(db: DbOrTx, userId: string, options: { admin?: boolean } = {}): CampaignSummary[] {
  const columns = { id: campaigns.id, name: campaigns.name, description: campaigns.description, createdAt: campaigns.createdAt, archivedAt: campaigns.archivedAt };
  const mine = options.admin
    ? db.select(columns).from(campaigns).orderBy(desc(campaigns.createdAt), asc(campaigns.name)).all()
    : db
        .select(columns)
        .from(campaignMembers)
        .innerJoin(campaigns, eq(campaigns.id, campaignMembers.campaignId))
        .where(eq(campaignMembers.userId, userId))
        .orderBy(desc(campaigns.createdAt), asc(campaigns.name))
        .all();
  if (mine.length === 0) return [];
  const ids = mine.map((c) => c.id);
  const roles = db
    .select({ campaignId: campaignMemberRoles.campaignId, role: campaignMemberRoles.role })
    .from(campaignMemberRoles)
    .where(and(eq(campaignMemberRoles.userId, userId), inArray(campaignMemberRoles.campaignId, ids)))
    .all();
  const counts = db
    .select({ campaignId: campaignMembers.campaignId, n: count() })
    .from(campaignMembers)
    .where(inArray(campaignMembers.campaignId, ids))
    .groupBy(campaignMembers.campaignId)
    .all();
  return mine.map((c) => ({
    id: c.id,
    name: c.name,
    description: c.description,
    createdAt: iso(c.createdAt),
    archivedAt: c.archivedAt ? iso(c.archivedAt) : null,
    myRoles: CAMPAIGN_ROLES.filter((r) => roles.some((x) => x.campaignId === c.id && x.role === r)),
    memberCount: counts.find((x) => x.campaignId === c.id)?.n ?? 0,
  }));
}

export function listMembers(db: DbOrTx, campaignId: string): CampaignMember[] {
  const rows = db
    .select({ userId: user.id, name: user.name, email: user.email, kind: user.kind, addedAt: campaignMembers.createdAt })
    .from(campaignMembers)
    .innerJoin(user, eq(user.id, campaignMembers.userId))
    .where(eq(campaignMembers.campaignId, campaignId))
    .orderBy(asc(user.name))
    .all();
  const roles = db
    .select({ userId: campaignMemberRoles.userId, role: campaignMemberRoles.role })
    .from(campaignMemberRoles)
    .where(eq(campaignMemberRoles.campaignId, campaignId))
    .all();
  return rows.map((r) => ({
    userId: r.userId,
    name: r.name,
    email: r.email,
    kind: r.kind,
    roles: CAMPAIGN_ROLES.filter((role) => roles.some((x) => x.userId === r.userId && x.role === role)),
    addedAt: iso(r.addedAt),
  }));
}

export function listOpenInvitations(db: DbOrTx, campaignId: string): PendingInvitation[] {
  return db
    .select()
    .from(invitations)
    .where(and(eq(invitations.campaignId, campaignId), isNull(invitations.acceptedAt), gt(invitations.expiresAt, new Date())))
    .orderBy(asc(invitations.email))
    .all()
    .map(toPendingInvitation);
}

function toPendingInvitation(row: typeof invitations.$inferSelect): PendingInvitation {
  return { id: row.id, email: row.email, roles: row.roles, createdAt: iso(row.createdAt), expiresAt: iso(row.expiresAt) };
}

/** Who may add members: the campaign's analysts, and admins. */
export function canManageMembers(actor: Actor, myRoles: CampaignRole[]): boolean {
  return actor.kind === 'admin' || myRoles.includes('analyst');
}

export function getCampaignOverview(db: DbOrTx, actor: Actor, campaignId: string): CampaignOverview {
  const c = getCampaign(db, campaignId);
  if (!c) throw new HttpError('not_found', 'No campaign with that id.');
  const creator = db.select({ name: user.name, email: user.email }).from(user).where(eq(user.id, c.createdById)).get() ?? null;
  const myRoles = getCampaignRoles(db, campaignId, actor.id);
  const manage = canManageMembers(actor, myRoles);
  return {
    campaign: { id: c.id, name: c.name, description: c.description, createdAt: iso(c.createdAt), createdBy: creator, archivedAt: c.archivedAt ? iso(c.archivedAt) : null },
    myRoles,
    canManageMembers: manage,
    members: listMembers(db, campaignId),
    // Invitation addresses are visible to those who manage members only.
    invitations: manage ? listOpenInvitations(db, campaignId) : [],
  };
}

/**
 * Add a person to a campaign by e-mail. A known account becomes a member at once; an unknown
 * address gets an invitation e-mail (through the outbox) and becomes a member on sign-up.
 */
export async function addMember(app: AppServices, actor: Actor, campaignId: string, raw: unknown): Promise<AddMemberResult> {
  const { db, mailer, env } = app;
  const c = getCampaign(db, campaignId);
  if (!c) throw new HttpError('not_found', 'No campaign with that id.');
  const input = parseInput(memberInput, raw);
  const existing = db.select().from(user).where(eq(user.email, input.email)).get();

  if (existing) {
    if (existing.kind === 'guest' && input.roles.some((r) => r !== 'collaborator')) {
      throw new HttpError('validation_failed', `${input.email} has a guest account; guests can only be collaborators.`, 'roles');
    }
    const already = () => new HttpError('conflict', `${input.email} is already a member of this campaign.`, 'email');
    if (getCampaignRoles(db, campaignId, existing.id).length > 0) throw already();
    try {
      db.transaction((tx) => {
        tx.insert(campaignMembers).values({ campaignId, userId: existing.id, addedById: actor.id }).run();
        tx.insert(campaignMemberRoles).values(input.roles.map((role) => ({ campaignId, userId: existing.id, role }))).run();
        recordAudit(tx, { actorId: actor.id, action: 'campaign.member_added', campaignId, details: { userId: existing.id, roles: input.roles } });
      }, { behavior: 'immediate' });
    } catch (err) {
      if (isUniqueViolation(err)) throw already();
      throw err;
    }
    const member = listMembers(db, campaignId).find((m) => m.userId === existing.id)!;
    return { outcome: 'added', member };
  }

  const now = new Date();
  const open = db
    .select()
    .from(invitations)
    .where(and(eq(invitations.campaignId, campaignId), eq(invitations.email, input.email), isNull(invitations.acceptedAt)))
    .get();
  const alreadyInvited = () =>
    new HttpError('conflict', `${input.email} has already been invited to this campaign and has not signed up yet.`, 'email');
  if (open && open.expiresAt > now) throw alreadyInvited();

  const token = newToken();
  const id = newId();
  const expiresAt = new Date(now.getTime() + INVITATION_DAYS * 24 * 3600 * 1000);
  const mail = await mailer.prepare(
    invitationMail({ to: input.email, inviterName: actor.name, campaignName: c.name, roles: input.roles, baseUrl: env.baseUrl, token, expiresAt }),
  );
  let outboxId: number;
  try {
    outboxId = db.transaction((tx) => {
      // An expired invitation is replaced rather than kept open forever.
      tx.delete(invitations)
        .where(and(eq(invitations.campaignId, campaignId), eq(invitations.email, input.email), isNull(invitations.acceptedAt), lte(invitations.expiresAt, now)))
        .run();
      tx.insert(invitations)
        .values({ id, email: input.email, campaignId, roles: input.roles, tokenHash: hashToken(token), invitedById: actor.id, createdAt: now, expiresAt })
        .run();
      recordAudit(tx, { actorId: actor.id, action: 'campaign.invitation_sent', campaignId, details: { email: input.email, roles: input.roles } });
      return mailer.record(tx, mail);
    }, { behavior: 'immediate' });
  } catch (err) {
    if (isUniqueViolation(err)) throw alreadyInvited();
    throw err;
  }
  await mailer.dispatch(db, outboxId);
  const row = db.select().from(invitations).where(eq(invitations.id, id)).get()!;
  return { outcome: 'invited', invitation: toPendingInvitation(row) };
}
