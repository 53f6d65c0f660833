// Reusable harness for browser and HTTP tests: the built server (node scripts/server.mjs in front of
// dist/server/entry.mjs, as `npm start` runs it) on a free 127.0.0.1 port with a fresh, migrated
// and seeded SQLite file, and Debian's Chromium driven by playwright-core. Nothing is downloaded;
// everything started here is stopped by stop()/close().
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { openDatabase } from '../../src/db/client';
import { migrateDatabase } from '../../src/db/migrate';
import { projectRoot } from '../../src/db/paths';
import { freePort } from '../support/probes';
import { DEMO_CAMPAIGN, demoUsers, seedDemo } from '../../src/seed/seed';
import { seedReviewDemo } from '../../src/seed/review-stars';
import { createApp } from '../../src/app/app';
import { parseEnv } from '../../src/adapters/env';
import { eq } from 'drizzle-orm';
import { campaigns, user } from '../../src/db/schema';
import { nameKey } from '../../src/server/campaigns';
import { toActor, type Actor, type AppServices } from '../../src/server/context';

export const CHROMIUM_PATH = '/usr/bin/chromium';

export interface RunningApp {
  baseUrl: string;
  databasePath: string;
  /** The same database, opened in the test process for setup and assertions (WAL allows both). */
  app: AppServices;
  /** Server output so far (shown when something fails). */
  logs: () => string;
  stop: () => Promise<void>;
}

async function waitForHealth(baseUrl: string, child: ChildProcess, logs: () => string, timeoutMs = 30_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (child.exitCode !== null) throw new Error(`The server exited with ${child.exitCode}:\n${logs()}`);
    try {
      const res = await fetch(`${baseUrl}/api/health`);
      if (res.ok) return;
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 150));
  }
  throw new Error(`The server did not become healthy within ${timeoutMs} ms:\n${logs()}`);
}

/**
 * `worker: true` also starts one worker process (workers/index.ts through tsx) on the same
 * database, so batches started in the browser get fitted; stop() ends it with the server.
 */
export async function startApp(options: { seed?: boolean; env?: Record<string, string>; worker?: boolean } = {}): Promise<RunningApp> {
  const root = projectRoot();
  const entry = path.join(root, 'dist/server/entry.mjs');
  if (!existsSync(entry)) throw new Error('No build found: run `npm run build` before the browser tests.');

  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-e2e-'));
  const databasePath = path.join(dir, 'starkiln.db');
  const port = await freePort();
  const baseUrl = `http://127.0.0.1:${port}`;
  const env: Record<string, string> = {
    DATABASE_PATH: databasePath,
    BETTER_AUTH_SECRET: 'e2e-secret-e2e-secret-e2e-secret-0123456789',
    BETTER_AUTH_URL: baseUrl,
    MAIL_TRANSPORT: 'outbox',
    // Tests sign in many times from one address within seconds.
    AUTH_RATE_LIMIT: 'off',
    SIGNUP_OPEN: 'false',
    ...options.env,
  };

  const opened = openDatabase(databasePath);
  migrateDatabase(opened.db);
  const app = createApp(opened.db, parseEnv(env));
  if (options.seed ?? true) await seedDemo(app);

  let output = '';
  const child = spawn(process.execPath, [path.join(root, 'scripts/server.mjs')], {
    cwd: root,
    env: { ...process.env, ...env, HOST: '127.0.0.1', PORT: String(port), NODE_ENV: 'production' },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  child.stdout!.on('data', (d) => (output += d));
  child.stderr!.on('data', (d) => (output += d));
  const logs = () => output;

  const children: ChildProcess[] = [child];
  if (options.worker) {
    const worker = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts'), '--idle-ms', '100'], {
      cwd: root,
      env: { ...process.env, ...env, NODE_ENV: 'production' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    worker.stdout!.on('data', (d) => (output += `[worker] ${d}`));
    worker.stderr!.on('data', (d) => (output += `[worker] ${d}`));
    children.push(worker);
  }

  const stop = async () => {
    for (const c of children) {
      if (c.exitCode !== null || c.signalCode !== null) continue;
      const exited = new Promise((r) => c.once('exit', r));
      c.kill('SIGTERM');
      await Promise.race([exited, new Promise((r) => setTimeout(r, 5000))]);
      if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
    }
    opened.sqlite.close();
    rmSync(dir, { recursive: true, force: true });
  };

  try {
    await waitForHealth(baseUrl, child, logs);
  } catch (err) {
    await stop();
    throw err;
  }
  return { baseUrl, databasePath, app, logs, stop };
}

export interface Browser {
  context: BrowserContext;
  newPage: () => Promise<Page>;
  close: () => Promise<void>;
}

/** Debian's Chromium, headless, with everything that would reach the network switched off. */
export async function launchBrowser(): Promise<Browser> {
  const profile = mkdtempSync(path.join(os.tmpdir(), 'starkiln-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM_PATH,
    headless: true,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
  return {
    context,
    newPage: () => context.newPage(),
    close: async () => {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

/**
 * Sign in through the sign-in form, as a person does, and wait for the campaign list. The browser's
 * cookies are cleared first, so every call starts signed out; with `keepSession` a browser that is
 * already signed in (the sign-in page sends it on) is left as it is.
 */
export async function signInWithForm(
  browser: Browser,
  page: Page,
  baseUrl: string,
  person: { email: string; password: string },
  options: { keepSession?: boolean } = {},
): Promise<void> {
  if (!options.keepSession) await browser.context.clearCookies();
  await page.goto(`${baseUrl}/sign-in`);
  if (options.keepSession && new URL(page.url()).pathname !== '/sign-in') return;
  await page.getByLabel('E-mail').fill(person.email);
  await page.getByLabel('Password').fill(person.password);
  await Promise.all([page.waitForURL(`${baseUrl}/campaigns`), page.getByRole('button', { name: 'Sign in' }).click()]);
}

/** Sign in through better-auth's JSON endpoint; returns the Cookie header value for later calls. */
export async function signInCookie(baseUrl: string, email: string, password: string): Promise<string> {
  const res = await fetch(`${baseUrl}/api/auth/sign-in/email`, {
    method: 'POST',
    // better-auth refuses cookie-carrying POSTs without an Origin it trusts.
    headers: { 'content-type': 'application/json', origin: baseUrl },
    body: JSON.stringify({ email, password }),
  });
  if (!res.ok) throw new Error(`Sign-in as ${email} failed: ${res.status} ${await res.text()}`);
  return res.headers
    .getSetCookie()
    .map((c) => c.split(';')[0])
    .join('; ');
}

export interface ApiCall {
  status: number;
  body: unknown;
  contentType: string | null;
}

/** Call the API like a script would: JSON body, optional session cookie, Origin set. */
export async function callApi(
  baseUrl: string,
  pathname: string,
  options: { method?: string; cookie?: string; json?: unknown; rawBody?: string } = {},
): Promise<ApiCall> {
  const headers: Record<string, string> = { origin: baseUrl, accept: 'application/json' };
  if (options.cookie) headers.cookie = options.cookie;
  let body: string | undefined;
  if (options.json !== undefined) body = JSON.stringify(options.json);
  if (options.rawBody !== undefined) body = options.rawBody;
  if (body !== undefined) headers['content-type'] = 'application/json';
  const res = await fetch(`${baseUrl}${pathname}`, { method: options.method ?? (body ? 'POST' : 'GET'), headers, body });
  const text = await res.text();
  let parsed: unknown = text;
  try {
    parsed = JSON.parse(text);
  } catch {
    // leave as text: the assertion will show it
  }
  return { status: res.status, body: parsed, contentType: res.headers.get('content-type') };
}

/** The demo's people (demoUsers()), by role. */
export type DemoPerson = keyof ReturnType<typeof demoUsers>;

/** The built server on the demo, a browser, and the demo's campaign and people. */
export interface DemoRun {
  run: RunningApp;
  browser: Browser;
  /** The demo campaign's id. */
  campaignId: string;
  people: ReturnType<typeof demoUsers>;
  /** A person of the database by e-mail, as server functions take them. */
  actor: (email: string) => Actor;
  /** Signs `page` in as one of the demo's people through the form (signed out first). */
  signIn: (page: Page, who: DemoPerson) => Promise<void>;
  stop: () => Promise<void>;
}

/** The built server on the seeded demo and Chromium; stop() ends both. */
export async function startWithDemo(): Promise<DemoRun> {
  const run = await startApp();
  let browser: Browser;
  try {
    browser = await launchBrowser();
  } catch (err) {
    await run.stop();
    throw err;
  }
  const db = run.app.db;
  const people = demoUsers();
  const stop = async () => {
    await browser.close();
    await run.stop();
  };
  const campaign = db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get();
  if (!campaign) {
    await stop();
    throw new Error(`The demo campaign "${DEMO_CAMPAIGN.name}" is not in the seeded database`);
  }
  return {
    run,
    browser,
    campaignId: campaign.id,
    people,
    actor: (email) => {
      const u = db.select().from(user).where(eq(user.email, email)).get();
      if (!u) throw new Error(`No person with e-mail ${email} in the demo database`);
      return toActor(u);
    },
    signIn: (page, who) => signInWithForm(browser, page, run.baseUrl, people[who]),
    stop,
  };
}

/** The demo with its review material fitted: the batch that fitted it. */
export interface ReviewDemo extends DemoRun {
  batchId: string;
}

/**
 * The built server on the demo with its review material (the invented Lanternfield stars, fitted by
 * the worker path on the server's database file, as `npm run db:seed` makes them) and Chromium.
 */
export async function startWithReviewDemo(): Promise<ReviewDemo> {
  const demo = await startWithDemo();
  try {
    const batchId = await seedReviewDemo(demo.run.app, demo.actor(demo.people.analyst.email), demo.actor(demo.people.reviewer.email), demo.campaignId);
    if (!batchId) throw new Error('The demo database already had fits: the review material was not fitted here');
    return { ...demo, batchId };
  } catch (err) {
    await demo.stop();
    throw err;
  }
}
