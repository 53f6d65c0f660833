// `npm run worker`: one worker process draining the SQLite job queue of the app's database
// (DATABASE_PATH). Run as many as there are cores to spare; see workers/README.md.
// With `--backend redis` (or STARKILN_QUEUE=redis) it is a BullMQ fit worker that needs no database,
// or with `--role writer` the web host's one result writer (workers/redis-main.ts).
import os from 'node:os';
import { parseArgs } from 'node:util';
import { closeDb } from '../src/db/client';
import { getApp } from '../src/app/app';
import { getEnv } from '../src/adapters/env';
import { DEFAULT_FIT_CHUNK_STARS } from '../src/server/fit-job';
import { createWorker } from './runner';

const usage = `Usage: npm run worker -- [options]
  --id <name>          lease owner name (default: <host>:<pid>)
  --jobs <n>           jobs (chunks of stars, FIT_CHUNK_STARS each) claimed at once (default 1)
  --lease-ms <ms>      lease length; renewed every third of it (default 60000)
  --idle-ms <ms>       wait between polls of an empty queue (default 500)
  --backoff-ms <ms>    first retry delay, doubled per attempt (default 1000)
  --slow-ms <ms>       hold each chunk this long before fitting it (simulates slow jobs)
  --pause-in-write-ms <ms>  hold each chunk's write transaction open this long before commit (tests)
  --drain              exit when no job is waiting or running
  --quiet              no line per chunk
  --backend <b>        sqlite (default, or STARKILN_QUEUE) | redis
  --redis-url <url>    Redis for --backend redis (default REDIS_URL or redis://127.0.0.1:6379)
  --role <r>           with redis: fit (default; any machine, no database) | writer (web host, one)
  --max-in-flight <n>  writer: stars handed to Redis and not yet written back, at most (default 50000)`;

function intOption(values: Record<string, unknown>, name: string, min: number): number | undefined {
  const raw = values[name];
  if (raw === undefined) return undefined;
  const n = Number(raw);
  if (!Number.isInteger(n) || n < min) {
    console.error(`--${name} must be a whole number ≥ ${min}, got "${String(raw)}".\n${usage}`);
    process.exit(2);
  }
  return n;
}

let parsed;
try {
  parsed = parseArgs({
    options: {
      id: { type: 'string' },
      chunk: { type: 'string' },
      jobs: { type: 'string' },
      'lease-ms': { type: 'string' },
      'idle-ms': { type: 'string' },
      'backoff-ms': { type: 'string' },
      'slow-ms': { type: 'string' },
      'pause-in-write-ms': { type: 'string' },
      drain: { type: 'boolean' },
      quiet: { type: 'boolean' },
      backend: { type: 'string' },
      'redis-url': { type: 'string' },
      role: { type: 'string' },
      'max-in-flight': { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  });
} catch (err) {
  console.error(`${err instanceof Error ? err.message : String(err)}\n${usage}`);
  process.exit(2);
}
const { values } = parsed;
if (values.help) {
  console.log(usage);
  process.exit(0);
}

// Settings (and .env) are read before anything opens the database (getApp below).
const backend = values.backend ?? getEnv().queueBackend;
if (backend !== 'sqlite' && backend !== 'redis') {
  console.error(`--backend must be sqlite or redis, got "${backend}".\n${usage}`);
  process.exit(2);
}
if (backend === 'redis') {
  const { runRedisRole } = await import('./redis-main');
  await runRedisRole({
    id: values.id,
    role: values.role,
    redisUrl: values['redis-url'],
    chunk: intOption(values, 'chunk', 1),
    leaseMs: intOption(values, 'lease-ms', 100),
    idleMs: intOption(values, 'idle-ms', 10),
    backoffMs: intOption(values, 'backoff-ms', 0),
    slowMs: intOption(values, 'slow-ms', 0),
    maxInFlight: intOption(values, 'max-in-flight', 1),
    drain: values.drain ?? false,
    quiet: values.quiet ?? false,
    usage,
  });
} else if (values.chunk !== undefined) {
  console.error(`--chunk is no longer an option: a batch's stars are split into fit jobs of FIT_CHUNK_STARS stars (default ${DEFAULT_FIT_CHUNK_STARS}) when it starts; --jobs sets how many jobs a worker claims at once.\n${usage}`);
  process.exit(2);
} else if (values.role !== undefined || values['redis-url'] !== undefined || values['max-in-flight'] !== undefined) {
  console.error(`--role, --redis-url and --max-in-flight belong to --backend redis.\n${usage}`);
  process.exit(2);
}

const owner = values.id ?? `${os.hostname()}:${process.pid}`;
const app = getApp('worker');
const worker = createWorker(app, {
  owner,
  jobsAtOnce: intOption(values, 'jobs', 1),
  leaseMs: intOption(values, 'lease-ms', 100),
  idleMs: intOption(values, 'idle-ms', 10),
  backoffBaseMs: intOption(values, 'backoff-ms', 0),
  slowMs: intOption(values, 'slow-ms', 0),
  pauseInWriteMs: intOption(values, 'pause-in-write-ms', 0),
  drain: values.drain ?? false,
  log: values.quiet ? undefined : (line) => console.log(line),
});

for (const signal of ['SIGTERM', 'SIGINT'] as const) {
  process.on(signal, () => {
    if (worker.stopping) return;
    console.log(`[${owner}] ${signal}: finishing the chunk in hand, then stopping`);
    worker.stop();
  });
}

console.log(`[${owner}] worker started on ${app.env.databasePath}`);
worker
  .run()
  .then(() => {
    const t = worker.totals;
    console.log(`[${owner}] stopped: ${t.claimed} job(s) claimed, ${t.fitted} fitted, ${t.notFitted} not fitted, ${t.retried} retried, ${t.dead} gave up`);
    closeDb();
    process.exit(0);
  })
  .catch((err) => {
    console.error(`[${owner}] stopped by an error:`, err);
    closeDb();
    process.exit(1);
  });
