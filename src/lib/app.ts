// Builds the services a request needs. One instance per process for the server (getApp), one per
// test database in tests (createApp).
import type { AppDatabase } from '../db/client';
import { getDb } from '../db/client';
import type { Actor, AppServices } from '../server/context';
import { createAuth, type SessionUser } from './auth';
import { getEnv, type AppEnv } from './env';
import { createMailer } from './mail';

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
  if (!app) app = createApp(getDb(), getEnv());
  return app;
}

export function toActor(u: SessionUser | { id: string; name: string; email: string; kind: string }): Actor {
  const kind = u.kind === 'admin' || u.kind === 'guest' ? u.kind : 'member';
  return { id: u.id, name: u.name, email: u.email, kind };
}

/** Look up the session behind a request's cookies. */
export async function resolveActor(services: AppServices, headers: Headers): Promise<Actor | null> {
  const s = await services.auth.api.getSession({ headers });
  return s ? toActor(s.user as SessionUser) : null;
}
