// `npm run worker` (workers/supervise.ts) keeps its worker processes alive: a child killed with
// SIGKILL is started again after the backoff, and SIGTERM stops every child and then the supervisor.
import { spawn } from 'node:child_process';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { startBatch } from '../src/server/batches';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
const pids: number[] = [];
afterEach(() => {
  for (const pid of pids.splice(0)) {
    try {
      process.kill(pid, 'SIGKILL');
    } catch {
      // already gone
    }
  }
  for (const a of apps.splice(0)) a.cleanup();
});

const alive = (pid: number) => {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
};

async function waitFor(what: string, check: () => boolean, timeoutMs: number, logs: () => string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}; output:\n${logs()}`);
    await new Promise((r) => setTimeout(r, 25));
  }
}

describe('the worker supervisor', () => {
  it('restarts a worker killed with SIGKILL, and stops all of them on SIGTERM', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '20' });
    apps.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    insertMockStars(t.db, { campaignId: campaign.id, count: 400 });
    const batch = startBatch(t.app, analyst, campaign.id, {});

    const root = projectRoot();
    const sup = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/supervise.ts'), '--processes', '2', '--id', 'kept', '--idle-ms', '50', '--slow-ms', '50', '--lease-ms', '2000'], {
      cwd: root,
      env: { ...process.env, DATABASE_PATH: t.filePath, BETTER_AUTH_SECRET: 'supervisor-test-secret-supervisor-0123456', BETTER_AUTH_URL: 'http://127.0.0.1:4321', MAIL_TRANSPORT: 'outbox' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    pids.push(sup.pid!);
    let out = '';
    sup.stdout!.on('data', (d) => (out += d));
    sup.stderr!.on('data', (d) => (out += d));
    const exited = new Promise<{ code: number | null }>((resolve) => sup.on('exit', (code) => resolve({ code })));
    const logs = () => out;
    const started = () => [...out.matchAll(/\[supervisor\] worker (\d) started \(pid (\d+)\)/g)].map((m) => ({ n: Number(m[1]), pid: Number(m[2]) }));

    await waitFor('two workers to start', () => started().length === 2 && /\[kept-1\] worker started/.test(out) && /\[kept-2\] worker started/.test(out), 60_000, logs);
    started().forEach((s) => pids.push(s.pid));
    const first = started().find((s) => s.n === 1)!;
    process.kill(first.pid, 'SIGKILL');

    await waitFor('worker 1 to be started again', () => started().filter((s) => s.n === 1).length === 2, 60_000, logs);
    expect(out).toMatch(new RegExp(`worker 1 \\(pid ${first.pid}\\) died \\(SIGKILL\\); restarting in 1000 ms`));
    const again = started().filter((s) => s.n === 1)[1];
    pids.push(again.pid);
    expect(again.pid).not.toBe(first.pid);

    // The restarted worker takes part: the batch is finished by the two of them.
    await waitFor('the batch to finish', () => t.sqlite.prepare('SELECT status FROM batches WHERE id = ?').pluck().get(batch.id) === 'finished', 120_000, logs);

    sup.kill('SIGTERM');
    const { code } = await Promise.race([exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`supervisor did not stop:\n${out}`)), 60_000))]);
    expect(code, out).toBe(0);
    expect(out).toMatch(/\[supervisor\] every worker has stopped/);
    for (const s of started()) expect(alive(s.pid)).toBe(false);
  }, 240_000);
});
