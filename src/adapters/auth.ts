// better-auth: e-mail + password sign-in with database sessions on our SQLite through Drizzle.
// Accounts are created only through our own use cases (src/server/accounts.ts), which decide the
// account kind; a direct call to better-auth's sign-up endpoint is refused by the hook below.
import { AsyncLocalStorage } from 'node:async_hooks';
import { betterAuth } from 'better-auth';
import { drizzleAdapter } from 'better-auth/adapters/drizzle';
import { APIError } from 'better-auth/api';
import type { AppDatabase } from '../db/client';
import { account, session, user, verification } from '../db/schema';
import type { AccountKind } from '../contracts/vocabulary';
import type { Mailer } from './mail';
import { passwordResetMail } from './mail-templates';

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
    rateLimit: { enabled: config.rateLimit, window: 60, max: 200 },
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
