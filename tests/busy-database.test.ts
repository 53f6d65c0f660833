// Imports while workers fit, on one SQLite file: two real worker processes (`workers/index.ts`) fit
// a batch while this process uploads, imports and re-imports 20 000 rows. Before the write
// transactions were IMMEDIATE the import's deferred transaction (read, then upgrade to write) got
// SQLITE_BUSY at once and answered 500 "database is locked"; workers exited for good on SQLITE_BUSY.
// Now the import waits for the lock and the workers wait out a long import, and both finish.
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { startBatch } from '../src/server/batches';
import { createUpload, getUpload, importUpload, type ImportSummary } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const children: ChildProcess[] = [];
const apps: TestApp[] = [];
afterEach(() => {
  for (const c of children.splice(0)) if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
  for (const a of apps.splice(0)) a.cleanup();
});

function startWorker(databasePath: string, args: string[]) {
  const root = projectRoot();
  const child = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts'), ...args], {
    cwd: root,
    env: { ...process.env, DATABASE_PATH: databasePath, BETTER_AUTH_SECRET: 'busy-test-secret-busy-test-secret-0123456', BETTER_AUTH_URL: 'http://127.0.0.1:4321', MAIL_TRANSPORT: 'outbox' },
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

function csvOf(rows: number): string {
  const lines = ['id,ra,dec,V,V_err,Ks,Ks_err'];
  for (let n = 1; n <= rows; n++) lines.push(`cinder-${String(n).padStart(5, '0')},${(n % 360) + 0.5},${(n % 90) - 45},${(10 + (n % 50) / 10).toFixed(2)},0.02,${(8 + (n % 40) / 10).toFixed(2)},0.03`);
  return lines.join('\n') + '\n';
}

describe('an import while two workers fit on the same database file', () => {
  it('imports and re-imports 20 000 rows, and both workers finish the batch', async () => {
    const STARS = 3000;
    const ROWS = 20_000;
    // Small chunks: many short write transactions from each worker, all through the import.
    const t = createTestApp({ FIT_CHUNK_STARS: '10' });
    apps.push(t);
    const analyst = await makeUser(t.app);
    const fitted = makeCampaign(t.app, analyst, { name: 'Fitted season' });
    const importing = makeCampaign(t.app, analyst, { name: 'Import season' });
    insertMockStars(t.db, { campaignId: fitted.id, count: STARS });
    const batch = startBatch(t.app, analyst, fitted.id, {});
    const one = <T>(q: string, ...p: unknown[]) => t.sqlite.prepare(q).pluck().get(...p) as T;
    const results = () => one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id);

    const common = ['--idle-ms', '20', '--drain', '--quiet'];
    const a = startWorker(t.filePath, ['--id', 'busy-a', ...common]);
    const b = startWorker(t.filePath, ['--id', 'busy-b', ...common]);
    const logs = () => `--- a\n${a.output()}\n--- b\n${b.output()}`;
    await waitFor('the workers to write results', () => results() >= 100, 90_000, logs);

    const config = { dataDir: path.dirname(t.filePath), maxBytes: 50 * 1024 * 1024 };
    const form = new FormData();
    form.append('file', new Blob([csvOf(ROWS)], { type: 'text/csv' }), 'cinder.csv');
    const received = await createUpload(t.app, analyst, importing.id, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), config);
    // Reading and importing are intake jobs (decision record 0023), run here inline.
    await drainIntakeJobs(t.db);
    const upload = getUpload(t.db, importing.id, received.id);
    const importNow = async () => {
      const job = importUpload(t.app, analyst, importing.id, upload.id, body);
      await drainIntakeJobs(t.db);
      return outcomeOf(t.db, job.id).import as ImportSummary;
    };
    const body = { mapping: { layout: upload.detected!.layout, columns: upload.detected!.columns }, rules: upload.detected!.rules };

    const resultsBefore = results();
    const first = await importNow();
    expect(first.starsCreated).toBe(ROWS);
    expect(first.measurementsCreated).toBe(2 * ROWS);
    const again = await importNow();
    expect(again.starsUpdated).toBe(ROWS);
    expect(again.measurementsUpdated).toBe(2 * ROWS);
    // The imports ran while the batch was being fitted, not after it.
    expect(resultsBefore).toBeLessThan(STARS);

    const [ae, be] = await Promise.race([
      Promise.all([a.exited, b.exited]),
      new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`the workers did not finish:\n${logs()}`)), 180_000)),
    ]);
    expect(ae.code, logs()).toBe(0);
    expect(be.code, logs()).toBe(0);
    expect(results()).toBe(STARS);
    expect(one<number>('SELECT count(DISTINCT star_id) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(one<string>('SELECT status FROM batches WHERE id = ?', batch.id)).toBe('finished');
    expect(one<number>('SELECT count(*) FROM stars WHERE campaign_id = ?', importing.id)).toBe(ROWS);
  }, 300_000);
});
