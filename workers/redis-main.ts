// `npm run worker -- --backend redis [--role fit|writer]`: the process side of the Redis backend.
// fit (default) runs on any machine and opens no database; writer runs once, on the web host.
import os from 'node:os';
import { getEnv } from '../src/adapters/env';
import { createRedisFitWorker } from './redis-worker';

export interface RedisRoleArgs {
  id?: string;
  role?: string;
  redisUrl?: string;
  chunk?: number;
  leaseMs?: number;
  idleMs?: number;
  backoffMs?: number;
  slowMs?: number;
  maxInFlight?: number;
  drain: boolean;
  quiet: boolean;
  usage: string;
}

function onStopSignals(owner: string, stop: () => void) {
  for (const signal of ['SIGTERM', 'SIGINT'] as const) {
    process.on(signal, () => {
      console.log(`[${owner}] ${signal}: finishing the chunk in hand, then stopping`);
      stop();
    });
  }
}

export async function runRedisRole(a: RedisRoleArgs): Promise<never> {
  const role = a.role ?? 'fit';
  const owner = a.id ?? `${os.hostname()}:${process.pid}`;
  const log = a.quiet ? undefined : (line: string) => console.log(line);
  if (role === 'fit') {
    for (const [flag, v] of [['--drain', a.drain || undefined], ['--idle-ms', a.idleMs], ['--backoff-ms', a.backoffMs], ['--max-in-flight', a.maxInFlight]] as const) {
      if (v !== undefined) {
        console.error(`${flag} belongs to the writer (--role writer): it dispatches chunks and sets their retries.\n${a.usage}`);
        process.exit(2);
      }
    }
    const redisUrl = a.redisUrl ?? getEnv().redisUrl;
    const worker = createRedisFitWorker({ owner, redisUrl, lockMs: a.leaseMs, slowMs: a.slowMs, log });
    let stopped = false;
    onStopSignals(owner, () => {
      if (stopped) return;
      stopped = true;
      void worker.stop();
    });
    console.log(`[${owner}] fit worker started on ${redisUrl.replace(/\/\/[^@/]*@/, '//…@')} (queue starkiln-fit, no database)`);
    try {
      await worker.run();
      const t = worker.totals;
      console.log(`[${owner}] stopped: ${t.chunks} chunk(s), ${t.fitted} fitted, ${t.notFitted} not fitted, ${t.errors} error(s); band libraries fetched: ${worker.libraryFetches.join(', ') || 'none'}`);
      process.exit(0);
    } catch (err) {
      console.error(`[${owner}] stopped by an error:`, err);
      process.exit(1);
    }
  }
  if (role !== 'writer') {
    console.error(`--role must be fit or writer, got "${role}".\n${a.usage}`);
    process.exit(2);
  }
  if (a.chunk !== undefined) {
    console.error(`--chunk is no longer an option: a batch's stars are split into chunks of FIT_CHUNK_STARS stars when it starts, and each chunk is one BullMQ job.\n${a.usage}`);
    process.exit(2);
  }
  if (a.slowMs !== undefined) {
    console.error(`--slow-ms belongs to fit workers.\n${a.usage}`);
    process.exit(2);
  }
  // Only the writer touches the database.
  const { getApp } = await import('../src/app/app');
  const { closeDb } = await import('../src/db/client');
  const { createResultWriter } = await import('./result-writer');
  const app = getApp('worker');
  const redisUrl = a.redisUrl ?? app.env.redisUrl;
  const writer = createResultWriter(app, {
    owner,
    redisUrl,
    leaseMs: a.leaseMs,
    idleMs: a.idleMs,
    backoffMs: a.backoffMs,
    maxInFlight: a.maxInFlight,
    drain: a.drain,
    log,
  });
  onStopSignals(owner, () => writer.stop());
  console.log(`[${owner}] result writer started on ${app.env.databasePath} and ${redisUrl.replace(/\/\/[^@/]*@/, '//…@')}`);
  try {
    await writer.run();
    const t = writer.totals;
    console.log(`[${owner}] stopped: ${t.dispatchedStars} star(s) dispatched in ${t.chunks} chunk(s), ${t.written} result(s) written in ${t.transactions} transaction(s), ${t.ignored} duplicate(s) ignored, ${t.dead} gave up, ${t.released} released`);
    closeDb();
    process.exit(0);
  } catch (err) {
    console.error(`[${owner}] stopped by an error:`, err);
    closeDb();
    process.exit(1);
  }
}
