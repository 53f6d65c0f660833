// Builds the services a request needs. One instance per process for the server (getApp), one per
// test database in tests (createApp).
import type { AppDatabase } from '../db/client';
import { getDb } from '../db/client';
import { toActor, type Actor, type AppServices } from '../server/context';
import { createAuth, type SessionUser } from '../adapters/auth';
import { getEnv, type AppEnv } from '../adapters/env';
import { createMailer } from '../adapters/mail';
import { PARTIAL_IDLE_MS, processStartedAt, removeLeftoverPartials } from '../server/intake/storage';
import { removeOrphanStaging } from '../server/intake/staging';
import { startIntakeThread } from './intake-runner';

export function createApp(db: AppDatabase, env: AppEnv): AppServices {
  const mailer = createMailer({ transport: env.mailTransport, smtpUrl: env.smtpUrl, from: env.mailFrom });
  const auth = createAuth({
    db,
    mailer,
    secret: env.authSecret,
    baseUrl: env.baseUrl,
    trustedOrigins: env.trustedOrigins,
    rateLimit: env.authRateLimit,
    secureCookies: env.secureCookies,
  });
  return { db, env, mailer, auth };
}

let app: AppServices | undefined;

/**
 * The process-wide services; the first call opens and migrates the database and removes the partial
 * uploads a killed upload or a crash left behind (for the server: every one older than this process;
 * for a worker, which may start while the server receives a file: those idle for PARTIAL_IDLE_MS too),
 * and, for the server, the staging files of checks no upload can use (removeOrphanStaging). The server
 * then starts its intake thread (uploads are read, checked and imported off the web event loop).
 */
export function getApp(role: 'server' | 'worker' = 'server'): AppServices {
  if (!app) {
    // Settings first (they load .env), then the database they name.
    const env = getEnv();
    app = createApp(getDb(env.databasePath), env);
    startUpCleanUp(app, role);
    // After the clean-up: the thread is what writes staging files.
    if (role === 'server') startIntakeThread(app.db, env.databasePath, env.inputLimits);
  }
  return app;
}

function startUpCleanUp(services: AppServices, role: 'server' | 'worker'): void {
  const started = processStartedAt();
  const before = role === 'server' ? started : Math.min(started, Date.now() - PARTIAL_IDLE_MS);
  try {
    const removed = removeLeftoverPartials(services.env.dataDir, before);
    if (removed.length > 0) console.log(`Removed ${removed.length} partial upload file(s) left by an upload that never finished.`);
  } catch (err) {
    // A clean-up that cannot run must not keep the service from starting.
    console.error('The start-up clean-up of partial uploads failed:', err);
  }
  if (role !== 'server') return;
  // Staging files of checks: only the server's intake thread writes them, and it has not started yet.
  try {
    const removed = removeOrphanStaging(services.db, services.env.dataDir);
    if (removed.length > 0) console.log(`Removed ${removed.length} staging file(s) of checks no upload can use.`);
  } catch (err) {
    console.error('The start-up clean-up of staging files failed:', err);
  }
}

/** Look up the session behind a request's cookies. */
export async function resolveActor(services: AppServices, headers: Headers): Promise<Actor | null> {
  const s = await services.auth.api.getSession({ headers });
  return s ? toActor(s.user as SessionUser) : null;
}
