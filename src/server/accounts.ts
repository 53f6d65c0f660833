// Creating accounts. better-auth stores the password and session; we decide who may have an
// account and of which kind (docs/decisions/0003-accounts-and-roles.md):
// - the very first account of a fresh installation becomes an admin;
// - an invitation makes a member if it grants analyst or reviewer anywhere, else a guest;
// - otherwise sign-up is closed unless SIGNUP_OPEN=true (then: member).
import { and, count, eq, gt, isNull } from 'drizzle-orm';
import { z } from 'zod';
import { campaignMemberRoles, campaignMembers, campaigns, invitations, user } from '../db/schema';
import { accountGrant, PASSWORD_MAX_LENGTH, PASSWORD_MIN_LENGTH } from '../adapters/auth';
import { passwordWeakness } from '../adapters/password-strength';
import { countActiveApiTokens, revokeAllApiTokens } from './api-tokens';
import type { AccountKind } from '../contracts/vocabulary';
import { recordAudit } from './audit';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';
import { hashToken } from './ids';
import { parseInput } from './validation';
import type { DbOrTx } from '../db/client';

export const emailField = z
  .string({ error: 'email is required.' })
  .trim()
  .toLowerCase()
  .pipe(z.email('Enter a valid e-mail address, such as name@example.org.'));

export const passwordField = z
  .string({ error: 'password is required.' })
  .min(PASSWORD_MIN_LENGTH, `Use at least ${PASSWORD_MIN_LENGTH} characters for the password.`)
  .max(PASSWORD_MAX_LENGTH, `Use at most ${PASSWORD_MAX_LENGTH} characters for the password.`);

export const signUpInput = z.object({
  name: z
    .string({ error: 'name is required.' })
    .trim()
    .min(1, 'Enter your name.')
    .max(80, 'A name can have at most 80 characters.'),
  email: emailField,
  password: passwordField,
  invitation: z.string().trim().optional(),
});

export const signInInput = z.object({
  email: emailField,
  password: z.string({ error: 'password is required.' }).min(1, 'Enter your password.'),
});

function openInvitationsFor(db: DbOrTx, email: string) {
  return db
    .select()
    .from(invitations)
    .where(and(eq(invitations.email, email), isNull(invitations.acceptedAt), gt(invitations.expiresAt, new Date())))
    .all();
}

/** The open invitation behind a link, with its campaign name, or null if used, expired or unknown. */
export function findInvitation(db: DbOrTx, token: string) {
  if (!token) return null;
  const row = db
    .select({ invitation: invitations, campaignName: campaigns.name })
    .from(invitations)
    .innerJoin(campaigns, eq(campaigns.id, invitations.campaignId))
    .where(and(eq(invitations.tokenHash, hashToken(token)), isNull(invitations.acceptedAt), gt(invitations.expiresAt, new Date())))
    .get();
  return row ?? null;
}

/** Refuses a password that is easy to guess or leans on the person's name or e-mail (field: password). */
export function requireStrongPassword(password: string, person: { name?: string | null; email?: string | null }): void {
  const weak = passwordWeakness(password, person);
  if (weak) throw new HttpError('validation_failed', weak, 'password');
}

function userByEmail(db: DbOrTx, email: string) {
  return db.select().from(user).where(eq(user.email, email)).get() ?? null;
}

/**
 * Create an account of a given kind directly (seed, tests, admins). Returns the new user's id.
 * No cookies are set: this is not a sign-in.
 */
export async function createAccount(
  app: AppServices,
  raw: { name: string; email: string; password: string; kind: AccountKind },
): Promise<string> {
  const input = parseInput(signUpInput.omit({ invitation: true }), raw);
  requireStrongPassword(input.password, input);
  if (userByEmail(app.db, input.email)) {
    throw new HttpError('conflict', `An account with the e-mail ${input.email} already exists.`, 'email');
  }
  const result = await accountGrant.run({ kind: raw.kind }, () =>
    app.auth.api.signUpEmail({ body: { name: input.name, email: input.email, password: input.password } }),
  );
  acceptInvitations(app.db, result.user.id, input.email);
  return result.user.id;
}

/**
 * Self-service sign-up (from the sign-up page or POST /api/sign-up). Returns better-auth's
 * response, whose Set-Cookie headers sign the new person in.
 */
/** No account exists yet: the next one to sign up becomes the installation's admin. */
export function isFreshInstallation(db: DbOrTx): boolean {
  return (db.select({ n: count() }).from(user).get()?.n ?? 0) === 0;
}

export async function registerAccount(app: AppServices, raw: unknown, headers?: Headers): Promise<{ userId: string; response: Response }> {
  const { db } = app;
  const input = parseInput(signUpInput, raw);
  requireStrongPassword(input.password, input);

  let kind: AccountKind;
  if (input.invitation) {
    const found = findInvitation(db, input.invitation);
    if (!found) {
      throw new HttpError('validation_failed', 'This invitation link has been used or has expired. Ask for a new invitation.', 'invitation');
    }
    if (found.invitation.email !== input.email) {
      throw new HttpError('validation_failed', `This invitation was sent to ${found.invitation.email}; sign up with that address.`, 'email');
    }
    const grants = openInvitationsFor(db, input.email).flatMap((i) => i.roles);
    kind = grants.some((r) => r !== 'collaborator') ? 'member' : 'guest';
  } else {
    if (isFreshInstallation(db)) kind = 'admin';
    else if (app.env.signupOpen) kind = 'member';
    else throw new HttpError('forbidden', 'Sign-up is by invitation. Ask a campaign analyst or an admin to invite you.');
  }

  if (userByEmail(db, input.email)) {
    throw new HttpError('conflict', 'An account with this e-mail already exists. Sign in instead, or reset your password.', 'email');
  }

  const response = await accountGrant.run({ kind }, () =>
    app.auth.api.signUpEmail({ body: { name: input.name, email: input.email, password: input.password }, headers, asResponse: true }),
  );
  if (!response.ok) {
    const body = (await response.clone().json().catch(() => null)) as { message?: string } | null;
    throw new HttpError(response.status === 403 ? 'forbidden' : 'bad_request', body?.message ?? 'The account could not be created.');
  }
  const created = userByEmail(db, input.email);
  if (!created) throw new Error('better-auth reported success but no user row exists');
  acceptInvitations(db, created.id, input.email);
  return { userId: created.id, response };
}

/** Turn every open invitation for this address into campaign membership, in one transaction. */
export function acceptInvitations(db: AppServices['db'], userId: string, email: string): number {
  const open = openInvitationsFor(db, email);
  if (open.length === 0) return 0;
  const kind = db.select({ kind: user.kind }).from(user).where(eq(user.id, userId)).get()?.kind;
  db.transaction((tx) => {
    for (const inv of open) {
      // A guest account only ever holds the collaborator role.
      const roles = kind === 'guest' ? inv.roles.filter((r) => r === 'collaborator') : inv.roles;
      const already = tx
        .select()
        .from(campaignMembers)
        .where(and(eq(campaignMembers.campaignId, inv.campaignId), eq(campaignMembers.userId, userId)))
        .get();
      if (!already && roles.length > 0) {
        tx.insert(campaignMembers).values({ campaignId: inv.campaignId, userId, addedById: inv.invitedById }).run();
        tx.insert(campaignMemberRoles).values(roles.map((role) => ({ campaignId: inv.campaignId, userId, role }))).run();
      }
      tx.update(invitations).set({ acceptedAt: new Date(), acceptedUserId: userId }).where(eq(invitations.id, inv.id)).run();
      recordAudit(tx, { actorId: userId, action: 'campaign.invitation_accepted', campaignId: inv.campaignId, details: { roles } });
    }
  }, { behavior: 'immediate' });
  return open.length;
}

/**
 * Send a password-reset link (through the outbox) if an account has this address. The answer is
 * the same either way, so the form cannot be used to probe for accounts.
 */
export async function requestPasswordReset(app: AppServices, raw: unknown): Promise<void> {
  const { email } = parseInput(z.object({ email: emailField }), raw);
  await app.auth.api.requestPasswordReset({ body: { email } });
}

export const resetPasswordInput = z.object({
  token: z.string({ error: 'The reset link is incomplete.' }).min(1, 'The reset link is incomplete.'),
  password: passwordField,
  /** Also revoke every API token of the account (a reset often follows a leak). */
  revokeTokens: z.boolean().optional(),
});

const RESET_LINK_GONE = 'This reset link has been used or has expired. Ask for a new one.';

/** The account behind an unused, unexpired reset link, with its number of active API tokens; else null. */
export async function resetLinkAccount(app: AppServices, token: string): Promise<{ userId: string; name: string; email: string; activeTokens: number } | null> {
  if (!token) return null;
  const ctx = await app.auth.$context;
  const found = await ctx.internalAdapter.findVerificationValue(`reset-password:${token}`);
  if (!found || found.expiresAt < new Date()) return null;
  const person = app.db.select().from(user).where(eq(user.id, found.value)).get();
  if (!person) return null;
  return { userId: person.id, name: person.name, email: person.email, activeTokens: countActiveApiTokens(app.db, person.id) };
}

/** Sets the new password (sessions end); with revokeTokens, the account's API tokens are revoked too. */
export async function resetPassword(app: AppServices, raw: unknown): Promise<{ revokedTokens: number }> {
  const input = parseInput(resetPasswordInput, raw);
  const owner = await resetLinkAccount(app, input.token);
  if (!owner) throw new HttpError('validation_failed', RESET_LINK_GONE, 'token');
  requireStrongPassword(input.password, owner);
  try {
    await app.auth.api.resetPassword({ body: { token: input.token, newPassword: input.password } });
  } catch {
    throw new HttpError('validation_failed', RESET_LINK_GONE, 'token');
  }
  const revokedTokens = input.revokeTokens ? revokeAllApiTokens(app.db, owner.userId, 'password reset') : 0;
  return { revokedTokens };
}

export const changePasswordInput = z.object({
  currentPassword: z.string({ error: 'Enter your current password.' }).min(1, 'Enter your current password.'),
  password: passwordField,
  /** End every other session of the account (this one goes on under a new cookie). */
  signOutOthers: z.boolean().optional(),
});

/**
 * The signed-in person sets a new password, giving the current one. `headers` carry their session
 * cookie; the answer is better-auth's, whose Set-Cookie the page forwards (with signOutOthers the
 * session token is replaced). API tokens stay: a person who suspects a leak revokes them on the
 * tokens page, or resets the password from the e-mail link.
 */
export async function changePassword(app: AppServices, actor: Actor, raw: unknown, headers: Headers): Promise<Response> {
  const input = parseInput(changePasswordInput, raw);
  requireStrongPassword(input.password, actor);
  if (input.password === input.currentPassword) {
    throw new HttpError('validation_failed', 'The new password is the one you have now; choose another.', 'password');
  }
  const response = await app.auth.api.changePassword({
    body: { currentPassword: input.currentPassword, newPassword: input.password, revokeOtherSessions: input.signOutOthers ?? false },
    headers,
    asResponse: true,
  });
  if (response.status === 401) throw new HttpError('unauthenticated', 'Sign in again to change your password.');
  if (!response.ok) {
    const body = (await response.clone().json().catch(() => null)) as { code?: string; message?: string } | null;
    if (body?.code === 'INVALID_PASSWORD') throw new HttpError('validation_failed', 'That is not your current password.', 'currentPassword');
    throw new HttpError('bad_request', body?.message ?? 'The password could not be changed.', 'password');
  }
  return response;
}
