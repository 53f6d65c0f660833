// better-auth: e-mail + password sign-in with database sessions on our SQLite through Drizzle.
// Accounts are created only through our own use cases (src/server/accounts.ts), which decide the
// account kind; a direct call to better-auth's sign-up endpoint is refused by the hook below.
import { AsyncLocalStorage } from 'node:async_hooks';
import { betterAuth } from 'better-auth';
import { drizzleAdapter } from 'better-auth/adapters/drizzle';
import { APIError, createAuthMiddleware, getSessionFromCtx } from 'better-auth/api';
import type { AppDatabase } from '../db/client';
import { account, session, user, verification } from '../db/schema';
import type { AccountKind } from '../contracts/vocabulary';
import type { Mailer } from './mail';
import { passwordResetMail } from './mail-templates';
import { passwordWeakness } from './password-strength';

/** Set by createAccount() around the better-auth call: the kind the new account gets. */
export interface AccountGrant {
  kind: AccountKind;
}
export const accountGrant = new AsyncLocalStorage<AccountGrant>();

export const PASSWORD_MIN_LENGTH = 10;
export const PASSWORD_MAX_LENGTH = 128;

export interface AuthConfig {
  db: AppDatabase;
  mailer: Mailer;
  secret: string;
  baseUrl: string;
  trustedOrigins: string[];
  rateLimit: boolean;
  /** The public address is https: cookies are Secure (and __Secure- prefixed). */
  secureCookies: boolean;
}

/**
 * The request header carrying the client's address to better-auth's rate limiter. The middleware
 * sets it on every request from the peer address and TRUSTED_PROXIES (src/adapters/client-address.ts),
 * replacing any value a client sent.
 */
export const CLIENT_ADDRESS_HEADER = 'x-starkiln-client';

/** Password-reset e-mails per account: at most this many in RESET_MAIL_WINDOW_MS (counted in the outbox). */
export const RESET_MAILS_PER_ACCOUNT = 3;
export const RESET_MAIL_WINDOW_MS = 60 * 60 * 1000;

function weakPassword(message: string): APIError {
  return new APIError('BAD_REQUEST', { message, code: 'WEAK_PASSWORD' });
}

export function createAuth(config: AuthConfig) {
  const { db, mailer } = config;
  return betterAuth({
    appName: 'Starkiln',
    secret: config.secret,
    baseURL: config.baseUrl,
    basePath: '/api/auth',
    trustedOrigins: config.trustedOrigins,
    database: drizzleAdapter(db, { provider: 'sqlite', schema: { user, session, account, verification } }),
    emailAndPassword: {
      enabled: true,
      minPasswordLength: PASSWORD_MIN_LENGTH,
      maxPasswordLength: PASSWORD_MAX_LENGTH,
      autoSignIn: true,
      revokeSessionsOnPasswordReset: true,
      resetPasswordTokenExpiresIn: 60 * 60,
      sendResetPassword: async ({ user: u, token }) => {
        // Per account, whatever address asks: the answer to the asker stays the same (no probing).
        const since = Date.now() - RESET_MAIL_WINDOW_MS;
        const sent = db.$client
          .prepare("SELECT count(*) FROM outbox_messages WHERE kind = 'password-reset' AND to_address = ? AND created_at > ?")
          .pluck()
          .get(u.email, since) as number;
        if (sent >= RESET_MAILS_PER_ACCOUNT) {
          console.warn(`password reset for ${u.email} not sent: ${sent} reset e-mails within the last hour already`);
          return;
        }
        await mailer.send(db, passwordResetMail({ to: u.email, name: u.name, baseUrl: config.baseUrl, token }));
      },
    },
    user: {
      additionalFields: {
        kind: { type: 'string', required: false, input: false, defaultValue: 'member' },
      },
    },
    session: {
      expiresIn: 60 * 60 * 24 * 14,
      updateAge: 60 * 60 * 24,
    },
    // better-auth's own limiter on its HTTP endpoints, keyed on the client's address: 200 requests a
    // minute in general; its built-in stricter rules stay (sign-in, sign-up, change-password: 3 in
    // 10 s; reset requests: 3 a minute). The per-account sign-in delay is src/web/sign-in-delay.ts.
    rateLimit: { enabled: config.rateLimit, window: 60, max: 200 },
    advanced: {
      ipAddress: { ipAddressHeaders: [CLIENT_ADDRESS_HEADER] },
      useSecureCookies: config.secureCookies,
    },
    hooks: {
      // Password strength on every way a password is set: sign-up, reset and change.
      before: createAuthMiddleware(async (ctx) => {
        const body = (ctx.body ?? {}) as Record<string, unknown>;
        if (ctx.path === '/sign-up/email' && typeof body.password === 'string') {
          const weak = passwordWeakness(body.password, { name: String(body.name ?? ''), email: String(body.email ?? '') });
          if (weak) throw weakPassword(weak);
        } else if (ctx.path === '/reset-password' && typeof body.newPassword === 'string') {
          const token = typeof body.token === 'string' ? body.token : '';
          const found = token ? await ctx.context.internalAdapter.findVerificationValue(`reset-password:${token}`) : null;
          const person = found ? await ctx.context.internalAdapter.findUserById(found.value) : null;
          const weak = passwordWeakness(body.newPassword, { name: person?.name, email: person?.email });
          if (weak) throw weakPassword(weak);
        } else if (ctx.path === '/change-password' && typeof body.newPassword === 'string') {
          const current = await getSessionFromCtx(ctx);
          const weak = passwordWeakness(body.newPassword, { name: current?.user.name, email: current?.user.email });
          if (weak) throw weakPassword(weak);
        }
      }),
    },
    databaseHooks: {
      // A deactivated account (src/server/people.ts) cannot sign in again.
      session: {
        create: {
          before: async (data) => {
            const deactivated = db.$client.prepare('SELECT deactivated_at FROM user WHERE id = ?').pluck().get(data.userId);
            if (deactivated !== null && deactivated !== undefined) {
              throw new APIError('FORBIDDEN', { message: 'This account has been deactivated by an admin.' });
            }
            return { data };
          },
        },
      },
      user: {
        create: {
          before: async (data) => {
            const grant = accountGrant.getStore();
            if (!grant) {
              throw new APIError('FORBIDDEN', {
                message: 'Accounts are created from an invitation or by an admin, not through this endpoint.',
              });
            }
            return { data: { ...data, kind: grant.kind } };
          },
        },
      },
    },
  });
}

export type Auth = ReturnType<typeof createAuth>;
export type AuthSession = NonNullable<Awaited<ReturnType<Auth['api']['getSession']>>>;
export type SessionUser = AuthSession['user'] & { kind: AccountKind };
