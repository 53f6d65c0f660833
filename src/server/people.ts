// People (admin): every account with its kind and campaign roles, changing an account's kind,
// inviting someone to a campaign by e-mail (the campaigns use case, through the outbox),
// deactivating and reactivating accounts, and the audit log. Callers check that the actor is an
// admin (src/web/guards.ts requireAdmin).
//
// Deactivation: the account keeps its history (fits, decisions, audit entries stay attributed) but
// its sessions are deleted at once, it cannot sign in again (better-auth hook in src/adapters/auth.ts),
// and every request — session or API token — is refused while deactivatedAt is set
// (activeActor(), called where the middleware settles who the actor is).
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { ACCOUNT_KINDS, CAMPAIGN_ROLES, type AccountKind, type CampaignRole } from '../contracts/vocabulary';
import { recordAudit } from './audit';
import type { AddMemberResult } from '../contracts/api';
import { addMember } from './campaigns';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';
import { parseInput } from './validation';

export interface PersonView {
  id: string;
  name: string;
  email: string;
  kind: AccountKind;
  createdAt: string;
  deactivatedAt: string | null;
  campaigns: { id: string; name: string; roles: CampaignRole[] }[];
  /** Open sessions right now (signed in somewhere). */
  sessions: number;
  activeTokens: number;
}

const hasTable = (db: AppDatabase, name: string) => !!db.$client.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?").get(name);

/** People, a page at a time, ordered by name; `q` filters on name or e-mail. */
export function listPeople(db: AppDatabase, options: { limit?: number; offset?: number; q?: string } = {}): { total: number; people: PersonView[] } {
  const sqlite = db.$client;
  const limit = Math.min(200, Math.max(1, options.limit ?? 50));
  const offset = Math.max(0, options.offset ?? 0);
  const q = options.q?.trim() ? `%${options.q.trim().toLowerCase().replace(/[%_\\]/g, (c) => '\\' + c)}%` : null;
  const where = q ? "WHERE lower(u.name) LIKE @q ESCAPE '\\' OR u.email LIKE @q ESCAPE '\\'" : '';
  const total = sqlite.prepare(`SELECT count(*) FROM user u ${where}`).pluck().get(q ? { q } : {}) as number;
  const tokens = hasTable(db, 'api_tokens')
    ? "(SELECT count(*) FROM api_tokens t WHERE t.user_id = u.id AND t.revoked_at IS NULL AND (t.expires_at IS NULL OR t.expires_at > @now))"
    : '0';
  const rows = sqlite
    .prepare(
      `SELECT u.id, u.name, u.email, u.kind, u.created_at, u.deactivated_at,
              (SELECT count(*) FROM session s WHERE s.user_id = u.id AND s.expires_at > @now) AS sessions,
              ${tokens} AS tokens
       FROM user u ${where} ORDER BY lower(u.name), u.email LIMIT @limit OFFSET @offset`,
    )
    .all({ ...(q ? { q } : {}), now: Date.now(), limit, offset }) as {
    id: string;
    name: string;
    email: string;
    kind: AccountKind;
    created_at: number;
    deactivated_at: number | null;
    sessions: number;
    tokens: number;
  }[];
  const roles = sqlite
    .prepare(
      `SELECT r.user_id, r.campaign_id, c.name, r.role FROM campaign_member_roles r JOIN campaigns c ON c.id = r.campaign_id
       WHERE r.user_id IN (SELECT value FROM json_each(?)) ORDER BY c.name`,
    )
    .all(JSON.stringify(rows.map((r) => r.id))) as { user_id: string; campaign_id: string; name: string; role: CampaignRole }[];
  const people = rows.map((r) => {
    const campaigns = new Map<string, { id: string; name: string; roles: CampaignRole[] }>();
    for (const m of roles.filter((x) => x.user_id === r.id)) {
      let c = campaigns.get(m.campaign_id);
      if (!c) campaigns.set(m.campaign_id, (c = { id: m.campaign_id, name: m.name, roles: [] }));
      c.roles.push(m.role);
    }
    for (const c of campaigns.values()) c.roles = CAMPAIGN_ROLES.filter((x) => c.roles.includes(x));
    return {
      id: r.id,
      name: r.name,
      email: r.email,
      kind: r.kind,
      createdAt: new Date(r.created_at).toISOString(),
      deactivatedAt: r.deactivated_at ? new Date(r.deactivated_at).toISOString() : null,
      campaigns: [...campaigns.values()],
      sessions: r.sessions,
      activeTokens: r.tokens,
    };
  });
  return { total, people };
}

function requirePerson(db: AppDatabase, userId: string) {
  const row = db.$client.prepare('SELECT id, name, email, kind, deactivated_at FROM user WHERE id = ?').get(userId) as
    | { id: string; name: string; email: string; kind: AccountKind; deactivated_at: number | null }
    | undefined;
  if (!row) throw new HttpError('not_found', 'No account with that id.');
  return row;
}

function activeAdmins(db: AppDatabase): number {
  return db.$client.prepare("SELECT count(*) FROM user WHERE kind = 'admin' AND deactivated_at IS NULL").pluck().get() as number;
}

export const kindInput = z.object({ kind: z.enum(ACCOUNT_KINDS, `kind must be one of ${ACCOUNT_KINDS.join(', ')}.`) });

/**
 * Changes an account's kind. Guests may hold only the collaborator role, so a person with analyst
 * or reviewer roles cannot become a guest; the last active admin cannot stop being one.
 */
export function setKind(db: AppDatabase, actor: Actor, userId: string, raw: unknown): PersonView {
  const { kind } = parseInput(kindInput, raw);
  db.transaction(
    (tx) => {
      const person = requirePerson(db, userId);
      if (person.kind === kind) throw new HttpError('validation_failed', `${person.email} is already ${kind === 'admin' ? 'an' : 'a'} ${kind}.`, 'kind');
      if (person.kind === 'admin' && kind !== 'admin' && !person.deactivated_at && activeAdmins(db) <= 1) {
        throw new HttpError('conflict', 'This is the last active admin: make someone else an admin first.', 'kind');
      }
      if (kind === 'guest') {
        const roles = db.$client.prepare("SELECT count(*) FROM campaign_member_roles WHERE user_id = ? AND role != 'collaborator'").pluck().get(userId) as number;
        if (roles > 0) throw new HttpError('conflict', `${person.email} is an analyst or reviewer in a campaign; guests can only be collaborators. Change those roles first.`, 'kind');
      }
      db.$client.prepare('UPDATE user SET kind = ?, updated_at = ? WHERE id = ?').run(kind, Date.now(), userId);
      recordAudit(tx, { actorId: actor.id, action: 'person.kind_changed', details: { userId, email: person.email, from: person.kind, to: kind } });
    },
    { behavior: 'immediate' },
  );
  return personView(db, userId);
}

export const deactivateInput = z.object({
  reason: z.string({ error: 'reason is required.' }).trim().min(3, 'Say why the account is deactivated (a few words).').max(1000, 'reason can have at most 1000 characters.'),
});

/** Deactivates an account: its sessions end now, its API tokens stop working, it cannot sign in. */
export function deactivatePerson(db: AppDatabase, actor: Actor, userId: string, raw: unknown): PersonView {
  const { reason } = parseInput(deactivateInput, raw);
  if (userId === actor.id) throw new HttpError('conflict', 'You cannot deactivate your own account; ask another admin.');
  db.transaction(
    (tx) => {
      const person = requirePerson(db, userId);
      if (person.deactivated_at) throw new HttpError('conflict', `${person.email} is already deactivated.`);
      if (person.kind === 'admin' && activeAdmins(db) <= 1) throw new HttpError('conflict', 'This is the last active admin.');
      const now = Date.now();
      db.$client.prepare('UPDATE user SET deactivated_at = ?, updated_at = ? WHERE id = ?').run(now, now, userId);
      const ended = db.$client.prepare('DELETE FROM session WHERE user_id = ?').run(userId).changes;
      recordAudit(tx, { actorId: actor.id, action: 'person.deactivated', details: { userId, email: person.email, reason, sessionsEnded: ended } });
    },
    { behavior: 'immediate' },
  );
  return personView(db, userId);
}

/** Lets a deactivated person sign in again (their tokens work again unless revoked or expired). */
export function reactivatePerson(db: AppDatabase, actor: Actor, userId: string): PersonView {
  db.transaction(
    (tx) => {
      const person = requirePerson(db, userId);
      if (!person.deactivated_at) throw new HttpError('conflict', `${person.email} is not deactivated.`);
      db.$client.prepare('UPDATE user SET deactivated_at = NULL, updated_at = ? WHERE id = ?').run(Date.now(), userId);
      recordAudit(tx, { actorId: actor.id, action: 'person.reactivated', details: { userId, email: person.email } });
    },
    { behavior: 'immediate' },
  );
  return personView(db, userId);
}

export function personView(db: AppDatabase, userId: string): PersonView {
  requirePerson(db, userId);
  const all = listPeople(db, { limit: 200, q: (db.$client.prepare('SELECT email FROM user WHERE id = ?').pluck().get(userId) as string) ?? '' });
  const found = all.people.find((p) => p.id === userId);
  if (!found) throw new HttpError('not_found', 'No account with that id.');
  return found;
}

export function isDeactivated(db: AppDatabase, userId: string): boolean {
  const v = db.$client.prepare('SELECT deactivated_at FROM user WHERE id = ?').pluck().get(userId) as number | null | undefined;
  return v !== null && v !== undefined;
}

/**
 * The one check every way of being identified goes through (session cookie or API token): a
 * deactivated account is nobody. Returns the actor, or null.
 */
export function activeActor(db: AppDatabase, actor: Actor | null): Actor | null {
  if (!actor) return null;
  return isDeactivated(db, actor.id) ? null : actor;
}

export const DEACTIVATED_MESSAGE = 'This account has been deactivated by an admin.';

export const inviteInput = z.object({
  campaignId: z.string({ error: 'campaignId is required: invitations are to a campaign.' }).min(1, 'Choose the campaign to invite to.'),
  email: z.string({ error: 'email is required.' }),
  roles: z.array(z.enum(CAMPAIGN_ROLES, `Roles are ${CAMPAIGN_ROLES.join(', ')}.`), { error: 'roles must be a list.' }),
});

/** Invites an address to a campaign (or adds an existing account), through the campaigns use case and the outbox. */
export async function invitePerson(app: AppServices, actor: Actor, raw: unknown): Promise<AddMemberResult> {
  const input = parseInput(inviteInput, raw);
  return addMember(app, actor, input.campaignId, { email: input.email, roles: input.roles });
}

export { auditLog, type AuditEntry } from './audit';
