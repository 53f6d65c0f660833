// Changing who is in a campaign after the fact: a member's roles changed or the member removed (a
// campaign always keeps at least one analyst: the last one cannot lose the role or leave), open
// invitations revoked, and campaigns archived (read-only: kept with every fit, review and release,
// listed apart, no new imports or batches) and restored. Callers check who may call
// (src/web/guards.ts: the campaign's analysts and admins); each change is audited in its transaction.
import { and, eq, isNull } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { campaignMemberRoles, campaignMembers, campaigns, invitations, user } from '../db/schema';
import type { CampaignMember } from '../contracts/api';
import { CAMPAIGN_ROLES, type CampaignRole } from '../contracts/vocabulary';
import { recordAudit } from './audit';
import { getCampaign, getCampaignRoles, listMembers } from './campaigns';
import type { Actor } from './context';
import { HttpError } from './errors';
import { parseInput } from './validation';

export const rolesInput = z.object({
  roles: z
    .array(z.enum(CAMPAIGN_ROLES, `Roles are ${CAMPAIGN_ROLES.join(', ')}.`), { error: 'roles must be a list.' })
    .min(1, 'Choose at least one role (to take every role away, remove the member).')
    .transform((roles) => CAMPAIGN_ROLES.filter((r) => roles.includes(r))),
});

const LAST_ANALYST = 'is the last analyst of this campaign; make someone else an analyst first, so the campaign keeps someone who can run it.';

function analysts(db: AppDatabase, campaignId: string): string[] {
  return db.$client.prepare("SELECT user_id FROM campaign_member_roles WHERE campaign_id = ? AND role = 'analyst'").pluck().all(campaignId) as string[];
}

function requireMember(db: AppDatabase, campaignId: string, userId: string): { name: string; email: string; kind: string; roles: CampaignRole[] } {
  const u = db.select({ name: user.name, email: user.email, kind: user.kind }).from(user).where(eq(user.id, userId)).get();
  const roles = getCampaignRoles(db, campaignId, userId);
  if (!u || roles.length === 0) throw new HttpError('not_found', 'That person is not a member of this campaign.');
  return { ...u, roles };
}

/** Replace a member's roles. Guests stay collaborators; the last analyst keeps the analyst role. */
export function setMemberRoles(db: AppDatabase, actor: Actor, campaignId: string, userId: string, raw: unknown): CampaignMember {
  const input = parseInput(rolesInput, raw);
  db.transaction(
    (tx) => {
      const m = requireMember(db, campaignId, userId);
      if (m.kind === 'guest' && input.roles.some((r) => r !== 'collaborator')) throw new HttpError('validation_failed', `${m.email} has a guest account; guests can only be collaborators.`, 'roles');
      const list = analysts(db, campaignId);
      if (m.roles.includes('analyst') && !input.roles.includes('analyst') && list.length === 1) throw new HttpError('conflict', `${m.name} ${LAST_ANALYST}`, 'roles');
      tx.delete(campaignMemberRoles).where(and(eq(campaignMemberRoles.campaignId, campaignId), eq(campaignMemberRoles.userId, userId))).run();
      tx.insert(campaignMemberRoles).values(input.roles.map((role) => ({ campaignId, userId, role }))).run();
      recordAudit(tx, { actorId: actor.id, action: 'campaign.member_roles_changed', campaignId, details: { userId, before: m.roles, after: input.roles } });
    },
    { behavior: 'immediate' },
  );
  return listMembers(db, campaignId).find((x) => x.userId === userId)!;
}

/** Remove a member (their past fits, decisions and audit entries stay attributed to them). */
export function removeMember(db: AppDatabase, actor: Actor, campaignId: string, userId: string): void {
  db.transaction(
    (tx) => {
      const m = requireMember(db, campaignId, userId);
      if (m.roles.includes('analyst') && analysts(db, campaignId).length === 1) throw new HttpError('conflict', `${m.name} ${LAST_ANALYST}`);
      tx.delete(campaignMemberRoles).where(and(eq(campaignMemberRoles.campaignId, campaignId), eq(campaignMemberRoles.userId, userId))).run();
      tx.delete(campaignMembers).where(and(eq(campaignMembers.campaignId, campaignId), eq(campaignMembers.userId, userId))).run();
      recordAudit(tx, { actorId: actor.id, action: 'campaign.member_removed', campaignId, details: { userId, email: m.email, roles: m.roles } });
    },
    { behavior: 'immediate' },
  );
}

/** Revoke an invitation nobody has used yet: its link stops working at once. */
export function revokeInvitation(db: AppDatabase, actor: Actor, campaignId: string, invitationId: string): void {
  db.transaction(
    (tx) => {
      const inv = tx.select().from(invitations).where(and(eq(invitations.id, invitationId), eq(invitations.campaignId, campaignId))).get();
      if (!inv) throw new HttpError('not_found', 'No invitation with that id in this campaign.');
      if (inv.acceptedAt) throw new HttpError('conflict', `${inv.email} has already used this invitation and is a member; change or remove the member instead.`);
      tx.delete(invitations).where(and(eq(invitations.id, invitationId), isNull(invitations.acceptedAt))).run();
      recordAudit(tx, { actorId: actor.id, action: 'campaign.invitation_revoked', campaignId, details: { email: inv.email, roles: inv.roles } });
    },
    { behavior: 'immediate' },
  );
}

export const archiveInput = z.object({ archived: z.boolean({ error: 'archived must be true or false.' }) });

/** Archive (or restore) a campaign: nothing is deleted; an archived campaign takes no new imports or batches. */
export function setArchived(db: AppDatabase, actor: Actor, campaignId: string, raw: unknown): { archivedAt: string | null } {
  const input = parseInput(archiveInput, raw);
  const at = input.archived ? new Date() : null;
  db.transaction(
    (tx) => {
      if (!getCampaign(tx, campaignId)) throw new HttpError('not_found', 'No campaign with that id.');
      tx.update(campaigns).set({ archivedAt: at }).where(eq(campaigns.id, campaignId)).run();
      recordAudit(tx, { actorId: actor.id, action: input.archived ? 'campaign.archived' : 'campaign.restored', campaignId, details: {} });
    },
    { behavior: 'immediate' },
  );
  return { archivedAt: at ? at.toISOString() : null };
}

export const ARCHIVED_MESSAGE = 'This campaign is archived: it keeps everything but takes no new imports or batches. An analyst or an admin can restore it on the campaign page.';

/** Refuse a change to an archived campaign's data (imports, batches). */
export function assertNotArchived(db: AppDatabase, campaignId: string): void {
  const c = getCampaign(db, campaignId);
  if (c?.archivedAt) throw new HttpError('conflict', ARCHIVED_MESSAGE);
}
