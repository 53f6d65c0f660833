// Personal API tokens: a person makes one in the app, a script sends it as `Authorization: Bearer
// <secret>` and acts as that person with that person's roles. Only a SHA-256 of the secret is
// stored, so the secret is shown once, at creation. Tokens are made and revoked in a signed-in
// session only: a leaked token cannot mint more tokens. Bearer requests need no cookie and no Origin
// header (they cannot be forged by another site: a browser never adds the header by itself).
import { randomBytes } from 'node:crypto';
import { and, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { apiTokens, user } from '../db/schema';
import { toActor } from './context';
import { recordAudit } from './audit';
import type { Actor } from './context';
import { HttpError } from './errors';
import { hashToken, newId } from './ids';
import { parseInput } from './validation';
import { writeIfFree } from './sqlite-errors';
import type { ApiTokenView } from '../contracts/api';

export const TOKEN_PREFIX = 'sk_';
export const MAX_TOKENS_PER_USER = 50;
/** lastUsedAt is written at most this often per token, so scripts do not turn reads into writes. */
const LAST_USED_RESOLUTION_MS = 60_000;

export type { ApiTokenView };

export const createTokenInput = z.object({
  name: z
    .string({ error: 'Give the token a name, such as the script that will use it.' })
    .trim()
    .min(1, 'Give the token a name, such as the script that will use it.')
    .max(80, 'A token name can have at most 80 characters.'),
  expiresInDays: z
    .number({ error: 'The expiry must be a number of days.' })
    .int('The expiry must be a whole number of days.')
    .min(1, 'The expiry must be at least 1 day.')
    .max(3650, 'The expiry can be at most 3650 days (ten years).')
    .nullable()
    .optional(),
});

type TokenRow = typeof apiTokens.$inferSelect;

function view(r: TokenRow, now = Date.now()): ApiTokenView {
  const status = r.revokedAt ? 'revoked' : r.expiresAt && r.expiresAt.getTime() <= now ? 'expired' : 'active';
  return {
    id: r.id,
    name: r.name,
    prefix: r.prefix,
    createdAt: r.createdAt.toISOString(),
    lastUsedAt: r.lastUsedAt?.toISOString() ?? null,
    expiresAt: r.expiresAt?.toISOString() ?? null,
    revokedAt: r.revokedAt?.toISOString() ?? null,
    status,
  };
}

export function listApiTokens(db: AppDatabase, userId: string, now = Date.now()): ApiTokenView[] {
  return db.select().from(apiTokens).where(eq(apiTokens.userId, userId)).orderBy(desc(apiTokens.createdAt)).all().map((r) => view(r, now));
}

/** Makes a token; the secret is in the answer and nowhere else. */
export function createApiToken(db: AppDatabase, actor: Actor, raw: unknown, now = new Date()): { token: ApiTokenView; secret: string } {
  const input = parseInput(createTokenInput, raw);
  const active = listApiTokens(db, actor.id).filter((t) => t.status === 'active').length;
  if (active >= MAX_TOKENS_PER_USER) {
    throw new HttpError('conflict', `You have ${active} active tokens, the most allowed. Revoke one you no longer use first.`);
  }
  const secret = TOKEN_PREFIX + randomBytes(32).toString('base64url');
  const id = newId();
  const expiresAt = input.expiresInDays ? new Date(now.getTime() + input.expiresInDays * 86_400_000) : null;
  db.transaction((tx) => {
    tx.insert(apiTokens).values({ id, userId: actor.id, name: input.name, tokenHash: hashToken(secret), prefix: secret.slice(0, 10), createdAt: now, expiresAt }).run();
    recordAudit(tx, { actorId: actor.id, action: 'token.created', details: { tokenId: id, name: input.name, expiresAt: expiresAt?.toISOString() ?? null } });
  }, { behavior: 'immediate' });
  const row = db.select().from(apiTokens).where(eq(apiTokens.id, id)).get()!;
  return { token: view(row), secret };
}

/** Revokes one of the person's own tokens (someone else's is "not found", not "forbidden"). */
export function revokeApiToken(db: AppDatabase, actor: Actor, tokenId: string, now = new Date()): ApiTokenView {
  const row = db.select().from(apiTokens).where(and(eq(apiTokens.id, tokenId), eq(apiTokens.userId, actor.id))).get();
  if (!row) throw new HttpError('not_found', 'You have no token with that id.');
  if (!row.revokedAt) {
    db.transaction((tx) => {
      tx.update(apiTokens).set({ revokedAt: now }).where(eq(apiTokens.id, tokenId)).run();
      recordAudit(tx, { actorId: actor.id, action: 'token.revoked', details: { tokenId, name: row.name } });
    }, { behavior: 'immediate' });
  }
  return view(db.select().from(apiTokens).where(eq(apiTokens.id, tokenId)).get()!);
}

/** How many of the person's tokens work today (neither revoked nor expired). */
export function countActiveApiTokens(db: AppDatabase, userId: string): number {
  return listApiTokens(db, userId).filter((t) => t.status === 'active').length;
}

/** Revokes every active token of the person (after a password reset, when they ask); returns how many. */
export function revokeAllApiTokens(db: AppDatabase, userId: string, reason: string, now = new Date()): number {
  const active = listApiTokens(db, userId, now.getTime()).filter((t) => t.status === 'active');
  if (active.length === 0) return 0;
  db.transaction((tx) => {
    for (const t of active) {
      tx.update(apiTokens).set({ revokedAt: now }).where(eq(apiTokens.id, t.id)).run();
      recordAudit(tx, { actorId: userId, action: 'token.revoked', details: { tokenId: t.id, name: t.name, reason } });
    }
  }, { behavior: 'immediate' });
  return active.length;
}

/** The secret of an `Authorization: Bearer …` header, or null when there is none. */
export function bearerSecret(headers: Headers): string | null {
  const h = headers.get('authorization');
  if (!h) return null;
  const m = /^Bearer\s+(\S+)\s*$/i.exec(h);
  return m ? m[1] : '';
}

export type BearerResult = { ok: true; actor: Actor; tokenId: string } | { ok: false; message: string };

/** Who a bearer secret belongs to; unknown, revoked and expired tokens are refused with a reason. */
export function actorFromBearer(db: AppDatabase, secret: string, now = new Date()): BearerResult {
  if (!secret.startsWith(TOKEN_PREFIX)) return { ok: false, message: 'The Authorization header must be "Bearer sk_…" with a token made on your account page.' };
  const row = db
    .select({ token: apiTokens, user: { id: user.id, name: user.name, email: user.email, kind: user.kind } })
    .from(apiTokens)
    .innerJoin(user, eq(user.id, apiTokens.userId))
    .where(eq(apiTokens.tokenHash, hashToken(secret)))
    .get();
  if (!row) return { ok: false, message: 'This API token is not known. Make a new one on your account page.' };
  if (row.token.revokedAt) return { ok: false, message: 'This API token was revoked. Make a new one on your account page.' };
  if (row.token.expiresAt && row.token.expiresAt.getTime() <= now.getTime()) return { ok: false, message: 'This API token has expired. Make a new one on your account page.' };
  if (!row.token.lastUsedAt || now.getTime() - row.token.lastUsedAt.getTime() >= LAST_USED_RESOLUTION_MS) {
    // Best effort: while an import holds the write lock, a script polling its job must not wait for it.
    writeIfFree(db.$client, () => db.update(apiTokens).set({ lastUsedAt: now }).where(eq(apiTokens.id, row.token.id)).run());
  }
  return { ok: true, actor: toActor(row.user), tokenId: row.token.id };
}
