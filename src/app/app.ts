// Builds the services a request needs. One instance per process for the server (getApp), one per
// test database in tests (createApp).
import type { AppDatabase } from '../db/client';
import { getDb } from '../db/client';
import { toActor, type Actor, type AppServices } from '../server/context';
import { createAuth, type SessionUser } from '../adapters/auth';
import { getEnv, type AppEnv } from '../adapters/env';
import { createMailer } from '../adapters/mail';

export function createApp(db: AppDatabase, env: AppEnv): AppServices {
  const mailer = createMailer({ transport: env.mailTransport, smtpUrl: env.smtpUrl, from: env.mailFrom });
  const auth = createAuth({
    db,
    mailer,
    secret: env.authSecret,
    baseUrl: env.baseUrl,
    trustedOrigins: env.trustedOrigins,
    rateLimit: env.authRateLimit,
  });
  return { db, env, mailer, auth };
}

let app: AppServices | undefined;

/** The process-wide services; the first call opens and migrates the database. */
export function getApp(): AppServices {
  if (!app) {
    // Settings first (they load .env), then the database they name.
    const env = getEnv();
    app = createApp(getDb(env.databasePath), env);
  }
  return app;
}

/** Look up the session behind a request's cookies. */
export async function resolveActor(services: AppServices, headers: Headers): Promise<Actor | null> {
  const s = await services.auth.api.getSession({ headers });
  return s ? toActor(s.user as SessionUser) : null;
}
