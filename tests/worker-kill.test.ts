// Real worker processes (`tsx workers/index.ts`) on a temporary database: one is killed with
// SIGKILL while it holds a chunk (before fitting it, or inside the transaction that writes it), the
// other finishes the batch; every star still ends with exactly one result, the batch is finished
// and the analyst gets exactly one e-mail. A worker asked to stop
// with SIGTERM hands its chunk back and exits 0.
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { startBatch } from '../src/server/batches';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const children: ChildProcess[] = [];
const apps: TestApp[] = [];
afterEach(() => {
  for (const c of children.splice(0)) if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
  for (const a of apps.splice(0)) a.cleanup();
});

interface Spawned {
  child: ChildProcess;
  output: () => string;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

function startWorker(databasePath: string, args: string[]): Spawned {
  const root = projectRoot();
  const child = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts'), ...args], {
    cwd: root,
    env: {
      ...process.env,
      DATABASE_PATH: databasePath,
      BETTER_AUTH_SECRET: 'worker-test-secret-worker-test-secret-0123',
      BETTER_AUTH_URL: 'http://127.0.0.1:4321',
      MAIL_TRANSPORT: 'outbox',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  children.push(child);
  let out = '';
  child.stdout!.on('data', (d) => (out += d));
  child.stderr!.on('data', (d) => (out += d));
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.on('exit', (code, signal) => resolve({ code, signal })));
  return { child, output: () => out, exited };
}

async function waitFor(what: string, check: () => boolean, timeoutMs: number, logs: () => string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}; worker output:\n${logs()}`);
    await new Promise((r) => setTimeout(r, 25));
  }
}

async function setUp(count: number, chunkStars: number) {
  const t = createTestApp({ FIT_CHUNK_STARS: String(chunkStars) });
  apps.push(t);
  const analyst = await makeUser(t.app);
  const campaign = makeCampaign(t.app, analyst);
  insertMockStars(t.db, { campaignId: campaign.id, count, fewBandsEvery: 250 });
  const batch = startBatch(t.app, analyst, campaign.id, {});
  return { t, analyst, campaign, batch };
}

describe('worker processes', () => {
  it('loses nothing when a worker is killed mid-batch: every star ends with exactly one result', async () => {
    const STARS = 2000;
    const { t, analyst, batch } = await setUp(STARS, 40);
    const one = <T>(q: string, ...p: unknown[]) => t.sqlite.prepare(q).pluck().get(...p) as T;
    const common = ['--lease-ms', '1500', '--idle-ms', '50', '--slow-ms', '120'];
    const a = startWorker(t.filePath, ['--id', 'worker-a', ...common]);
    const b = startWorker(t.filePath, ['--id', 'worker-b', '--drain', ...common]);
    const logs = () => `--- a\n${a.output()}\n--- b\n${b.output()}`;

    await waitFor(
      'worker-a to hold a chunk after some results exist',
      () =>
        one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id) >= 200 &&
        one<number>("SELECT count(*) FROM jobs WHERE status = 'leased' AND lease_owner = 'worker-a'") > 0,
      60_000,
      logs,
    );
    a.child.kill('SIGKILL');
    expect((await a.exited).signal).toBe('SIGKILL');
    const orphaned = t.sqlite.prepare("SELECT id FROM jobs WHERE status = 'leased' AND lease_owner = 'worker-a'").pluck().all() as number[];
    expect(orphaned.length).toBeGreaterThan(0);
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBeLessThan(STARS);

    const bExit = await Promise.race([b.exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`worker-b did not drain the queue:\n${logs()}`)), 90_000))]);
    expect(bExit.code, logs()).toBe(0);

    // The killed worker's jobs came back after their lease expired and were finished by worker-b.
    const recovered = t.sqlite
      .prepare(`SELECT status, attempts FROM jobs WHERE id IN (SELECT value FROM json_each(?))`)
      .all(JSON.stringify(orphaned)) as { status: string; attempts: number }[];
    expect(recovered.every((j) => j.status === 'done' && j.attempts >= 2)).toBe(true);

    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(one<number>('SELECT count(DISTINCT star_id) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(
      one<number>('SELECT count(*) FROM stars s WHERE s.campaign_id = ? AND (SELECT count(*) FROM fit_results r WHERE r.star_id = s.id AND r.batch_id = ?) != 1', batch.campaignId, batch.id),
    ).toBe(0);
    // 2000 / 250 stars have a single band: their fits fail for a reason of the data, and say so.
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ? AND ok = 0', batch.id)).toBe(STARS / 250);
    expect(one<number>("SELECT count(*) FROM jobs WHERE batch_id = ? AND status != 'done'", batch.id)).toBe(0);

    const row = t.sqlite.prepare('SELECT status, finished_at AS finishedAt, notified_at AS notifiedAt FROM batches WHERE id = ?').get(batch.id) as Record<string, unknown>;
    expect(row.status).toBe('finished');
    expect(row.notifiedAt).not.toBeNull();
    const mails = t.sqlite.prepare("SELECT to_address AS toAddress, subject FROM outbox_messages WHERE kind = 'notice'").all() as { toAddress: string; subject: string }[];
    expect(mails).toHaveLength(1);
    expect(mails[0].toAddress).toBe(analyst.email);
    expect(mails[0].subject).toContain(`${STARS - STARS / 250} fitted`);
  }, 120_000);

  it('loses nothing and duplicates nothing when a worker is killed inside the write of a chunk', async () => {
    const STARS = 600;
    const { t, analyst, batch } = await setUp(STARS, 100);
    const one = <T>(q: string, ...p: unknown[]) => t.sqlite.prepare(q).pluck().get(...p) as T;
    // worker-a fits its first chunk, inserts the 100 rows and then holds the transaction open
    // (a stalled disk) until it is killed; worker-b, started afterwards, drains the queue.
    const a = startWorker(t.filePath, ['--id', 'worker-a', '--lease-ms', '1500', '--idle-ms', '50', '--pause-in-write-ms', '60000']);
    await waitFor('worker-a to be inside the write of its chunk', () => /pausing 60000 ms inside the write of 100 result/.test(a.output()), 150_000, a.output);
    const inHand = t.sqlite.prepare("SELECT id FROM jobs WHERE status = 'leased' AND lease_owner = 'worker-a'").pluck().all() as number[];
    expect(inHand).toHaveLength(1);
    // Nothing of it is visible before the commit.
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(0);
    a.child.kill('SIGKILL');
    expect((await a.exited).signal).toBe('SIGKILL');
    // The rolled-back transaction left nothing behind, and the chunk is still leased to the dead worker.
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(0);
    expect(one<string>('SELECT lease_owner FROM jobs WHERE id = ?', inHand[0])).toBe('worker-a');

    const b = startWorker(t.filePath, ['--id', 'worker-b', '--drain', '--lease-ms', '1500', '--idle-ms', '50']);
    const bExit = await Promise.race([b.exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`worker-b did not drain the queue:\n${b.output()}`)), 150_000))]);
    expect(bExit.code, b.output()).toBe(0);

    // The killed chunk came back after its lease and was fitted once, by worker-b.
    expect(t.sqlite.prepare('SELECT status, attempts, stars_left FROM jobs WHERE id = ?').get(inHand[0])).toEqual({ status: 'done', attempts: 2, stars_left: 0 });
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(
      one<number>('SELECT count(*) FROM stars s WHERE s.campaign_id = ? AND (SELECT count(*) FROM fit_results r WHERE r.batch_id = ? AND r.star_id = s.id) != 1', batch.campaignId, batch.id),
    ).toBe(0);
    expect(one<number>("SELECT count(*) FROM jobs WHERE batch_id = ? AND status != 'done'", batch.id)).toBe(0);
    expect(one<string>('SELECT status FROM batches WHERE id = ?', batch.id)).toBe('finished');
    const mails = t.sqlite.prepare("SELECT to_address AS toAddress FROM outbox_messages WHERE kind = 'notice'").all() as { toAddress: string }[];
    expect(mails).toEqual([{ toAddress: analyst.email }]);
  }, 360_000);

  it('stops on SIGTERM: hands back the chunk it holds and exits 0', async () => {
    const { t, batch } = await setUp(100, 30);
    const w = startWorker(t.filePath, ['--id', 'worker-c', '--slow-ms', '20000', '--idle-ms', '50']);
    const held = () => t.sqlite.prepare("SELECT coalesce(sum(stars_left), 0) FROM jobs WHERE status = 'leased' AND lease_owner = 'worker-c'").pluck().get() as number;
    await waitFor('worker-c to claim a chunk', () => held() === 30, 120_000, w.output);
    w.child.kill('SIGTERM');
    const exit = await w.exited;
    expect(exit.code, w.output()).toBe(0);
    expect(held()).toBe(0);
    // Handed back without counting the attempt; nothing was written.
    expect(t.sqlite.prepare("SELECT sum(star_count) FROM jobs WHERE batch_id = ? AND status = 'pending' AND attempts = 0").pluck().get(batch.id)).toBe(100);
    expect(t.sqlite.prepare('SELECT count(*) FROM fit_results').pluck().get()).toBe(0);
    expect(w.output()).toMatch(/SIGTERM/);
  }, 180_000);
});
