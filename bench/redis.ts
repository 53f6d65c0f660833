// `npm run bench` section (or `npx tsx bench/redis.ts [--redis-stars N] [--redis-chunk N]`): the Redis backend on this
// machine. A private redis-server; a migrated temporary database with N invented stars; the result
// writer process and 1, 2 and 4 fit worker processes (`workers/index.ts --backend redis`), started
// before the batch so process start-up is not timed. Reports stars per second from the start of the
// batch to its last stored result. Then the result writer alone: every chunk of a batch is fitted
// beforehand and put on the results queue, and the writer's sustained rate (rows stored per second,
// rows per transaction) is measured — the ceiling the single SQLite writer puts on any number of
// remote workers. Speeds are measured here, never in tests.
import { spawn, type ChildProcess } from 'node:child_process';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Queue } from 'bullmq';
import IORedis from 'ioredis';
import { extrapolatedBandKeys } from '../src/core/extinction';
import { prepareFitModel } from '../src/core/fit';
import { openDatabase } from '../src/db/client';
import { migrateDatabase } from '../src/db/migrate';
import { createApp } from '../src/app/app';
import { parseEnv } from '../src/adapters/env';
import { batchQueue, startBatch } from '../src/server/batches';
import { bandLibraryByVersion } from '../src/server/fit-job';
import { RESULTS_QUEUE, RedisDispatchStore, redisConnection, type ResultChunk } from '../src/server/queue-redis';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from '../tests/factories-photometry';
import { startTestRedis, type TestRedis } from '../tests/support/redis';
import { fitChunk } from '../workers/redis-worker';
import { createResultWriter } from '../workers/result-writer';
import { mkdtempSync, rmSync } from 'node:fs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);
const argValue = (name: string) => {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
};
const N = Number(argValue('--redis-stars') ?? 20_000);
const CHUNK = Number(argValue('--redis-chunk') ?? 1000);
const WORKER_COUNTS = [1, 2, 4];

const secret = 'bench-secret-bench-secret-bench-secret-01';

async function world(dir: string, name: string) {
  const databasePath = path.join(dir, `${name}.db`);
  const opened = openDatabase(databasePath);
  migrateDatabase(opened.db);
  const app = createApp(opened.db, parseEnv({ DATABASE_PATH: databasePath, BETTER_AUTH_SECRET: secret, MAIL_TRANSPORT: 'outbox', FIT_CHUNK_STARS: String(CHUNK) }));
  const analyst = await makeUser(app);
  const campaign = makeCampaign(app, analyst, { name: 'Kestrel wide-field bench' });
  insertMockStars(opened.db, { campaignId: campaign.id, count: N });
  return { databasePath, opened, app, analyst, campaign };
}

function spawnRole(args: string[], databasePath?: string): { child: ChildProcess; started: Promise<void> } {
  const env: NodeJS.ProcessEnv = { ...process.env };
  delete env.DATABASE_PATH;
  if (databasePath) Object.assign(env, { DATABASE_PATH: databasePath, BETTER_AUTH_SECRET: secret, MAIL_TRANSPORT: 'outbox' });
  const child = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts'), '--backend', 'redis', ...args], { cwd: root, env, stdio: ['ignore', 'pipe', 'inherit'] });
  const started = new Promise<void>((resolve, reject) => {
    let out = '';
    child.stdout!.on('data', (d) => {
      out += d;
      if (/started/.test(out)) resolve();
    });
    child.once('exit', (code) => reject(new Error(`worker exited early (${code}): ${out}`)));
  });
  return { child, started };
}

async function stop(children: ChildProcess[]) {
  await Promise.all(
    children.map(
      (c) =>
        new Promise<void>((resolve) => {
          if (c.exitCode !== null || c.signalCode !== null) return resolve();
          c.once('exit', () => resolve());
          c.kill('SIGTERM');
        }),
    ),
  );
}

async function flush(redis: TestRedis) {
  const r = new IORedis(redisConnection(redis.url));
  await r.flushall();
  r.disconnect();
}

async function workersRun(redis: TestRedis, dir: string, workers: number): Promise<{ seconds: number; rate: number }> {
  await flush(redis);
  const w = await world(dir, `workers-${workers}`);
  const writer = spawnRole(['--role', 'writer', '--id', 'bench-writer', '--redis-url', redis.url, '--quiet', '--idle-ms', '20'], w.databasePath);
  const fits = Array.from({ length: workers }, (_, i) => spawnRole(['--id', `bench-fit-${i + 1}`, '--redis-url', redis.url, '--quiet']));
  await Promise.all([writer.started, ...fits.map((f) => f.started)]);
  await new Promise((r) => setTimeout(r, 500)); // BullMQ connections up
  const status = w.opened.sqlite.prepare('SELECT status FROM batches WHERE id = ?').pluck();
  const t0 = performance.now();
  const batch = startBatch(w.app, w.analyst, w.campaign.id, {});
  while (status.get(batch.id) !== 'finished') await new Promise((r) => setTimeout(r, 10));
  const seconds = (performance.now() - t0) / 1000;
  const n = w.opened.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id) as number;
  if (n !== N) throw new Error(`expected ${N} results, got ${n}`);
  await stop([writer.child, ...fits.map((f) => f.child)]);
  w.opened.sqlite.close();
  return { seconds, rate: N / seconds };
}

/** The writer alone, fed every chunk's results in advance. */
async function writerRun(redis: TestRedis, dir: string): Promise<{ seconds: number; rate: number; transactions: number; feedSeconds: number }> {
  await flush(redis);
  const w = await world(dir, 'writer');
  const batch = startBatch(w.app, w.analyst, w.campaign.id, {});
  const store = new RedisDispatchStore(w.opened.db);
  const claimed = batchQueue(w.opened.db).claim('redis-dispatch:bench', N, 3_600_000);
  const library = bandLibraryByVersion(w.opened.db, batch.bandLibraryVersion);
  const results = new Queue<ResultChunk>(RESULTS_QUEUE, { connection: redisConnection(redis.url) });
  const tf = performance.now();
  let prepared: ReturnType<typeof fitPrepared> | null = null;
  function fitPrepared(options: Parameters<typeof prepareFitModel>[1] & { law: 'f99' | 'ccm89' | 'od94' }) {
    return { model: prepareFitModel(library, options), extrapolated: extrapolatedBandKeys(Object.values(library.bands), options.law) };
  }
  for (let i = 0; i < claimed.length; i++) {
    const { chunks } = store.buildChunks('redis-dispatch:bench', [claimed[i]]);
    for (const c of chunks) {
      prepared ??= fitPrepared(c.data.batch.options);
      const { rows } = fitChunk(c.data, prepared);
      await results.add('results', { format: 1, chunkId: c.id, batchId: batch.id, rows }, { jobId: `${c.id}.r1`, removeOnComplete: true });
    }
  }
  const feedSeconds = (performance.now() - tf) / 1000;
  await results.close();
  const writer = createResultWriter(w.app, { owner: 'bench-writer', redisUrl: redis.url, noDispatch: true, drain: true, idleMs: 5 });
  const t0 = performance.now();
  await writer.run();
  const seconds = (performance.now() - t0) / 1000;
  const n = w.opened.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id) as number;
  if (n !== N) throw new Error(`writer bench: expected ${N} results, got ${n}`);
  w.opened.sqlite.close();
  return { seconds, rate: N / seconds, transactions: writer.totals.transactions, feedSeconds };
}

async function main() {
  const redis = await startTestRedis();
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-redis-'));
  const fmt = (x: number) => Math.round(x).toLocaleString('en');
  try {
    console.log(`redis: ${fmt(N)} invented stars × 8 bands, chunks of ${CHUNK}, Debian redis-server on loopback, ${os.cpus().length} cores (${os.cpus()[0]?.model ?? 'cpu'}), load ${os.loadavg().map((l) => l.toFixed(2)).join(' ')}`);
    const rows: { what: string; seconds: number; rate: number; note: string }[] = [];
    let one = 0;
    for (const k of WORKER_COUNTS) {
      const r = await workersRun(redis, dir, k);
      if (k === 1) one = r.rate;
      rows.push({ what: `${k} fit worker process${k === 1 ? '' : 'es'} + writer`, seconds: r.seconds, rate: r.rate, note: `${(r.rate / one).toFixed(2)}× one worker` });
    }
    const wr = await writerRun(redis, dir);
    rows.push({ what: 'result writer alone (results queued in advance)', seconds: wr.seconds, rate: wr.rate, note: `${wr.transactions} transactions, ${fmt(N / wr.transactions)} rows each; feeding the queue took ${wr.feedSeconds.toFixed(1)} s (not timed)` });
    const w1 = Math.max(...rows.map((r) => r.what.length));
    console.log('');
    console.log(`${'run'.padEnd(w1)}  ${'seconds'.padStart(8)}  ${'stars/s'.padStart(9)}  notes`);
    for (const r of rows) console.log(`${r.what.padEnd(w1)}  ${r.seconds.toFixed(2).padStart(8)}  ${fmt(r.rate).padStart(9)}  ${r.note}`);
    const best = Math.max(...rows.slice(0, WORKER_COUNTS.length).map((r) => r.rate));
    console.log('');
    console.log(`the single SQLite result writer sustains ${fmt(wr.rate)} results/s; the best worker run reached ${fmt(best)} stars/s (${((best / wr.rate) * 100).toFixed(0)} % of the writer's ceiling).`);
    console.log(`on ${os.cpus().length} cores the fit workers, the writer and redis-server share the same CPUs: more worker processes than cores cannot scale here; on separate machines each worker adds its own cores until the writer's rate is reached.`);
  } finally {
    await redis.stop();
    rmSync(dir, { recursive: true, force: true });
  }
}

await main();
process.exit(0);
