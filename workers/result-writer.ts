// The web host's side of the Redis backend (`npm run worker -- --backend redis --role writer`):
// ONE process next to the SQLite file that
//   - dispatches: claims pending fit jobs (chunks of stars) in SQLite (lease owner `redis:<chunk id>`)
//     and adds one BullMQ chunk per job carrying the stars' photometry, options and band library
//     version; publishes each band library version's tables to Redis once;
//   - writes: takes results jobs and stores several chunks per SQLite transaction, idempotently;
//   - buries chunks BullMQ gave up on (failure result per star), releases chunks Redis lost, keeps
//     the dispatched jobs' SQLite leases alive, and finishes batches (one e-mail).
// Design: docs/decisions/0010-redis-queue-backend.md.
import { Queue, Worker, type Job } from 'bullmq';
import IORedis from 'ioredis';
import { batchQueue, finishBatchIfDone } from '../src/server/batches';
import type { AppServices } from '../src/server/context';
import {
  BAND_LIBRARY_KEY_PREFIX,
  DEFAULT_CHUNK_ATTEMPTS,
  DEFAULT_DISPATCH_LEASE_MS,
  DEFAULT_MAX_IN_FLIGHT,
  FIT_QUEUE,
  RESULTS_QUEUE,
  RedisDispatchStore,
  redisConnection,
  type FitChunk,
  type ResultChunk,
} from '../src/server/queue-redis';
import { isFitJob } from '../src/server/fit-job';
import { databaseBackoffMs, isDatabaseError } from '../src/server/sqlite-errors';

export interface ResultWriterOptions {
  owner: string;
  redisUrl: string;
  /** SQLite fit jobs (chunks) claimed per dispatch round (default 8). */
  jobsPerRound?: number;
  /** SQLite lease of dispatched jobs, renewed every third of it. */
  leaseMs?: number;
  idleMs?: number;
  maxInFlight?: number;
  /** BullMQ attempts per chunk and the first backoff delay (exponential, half jitter). */
  chunkAttempts?: number;
  backoffMs?: number;
  /** Flush the write buffer at this many rows (or after flushMs). */
  flushRows?: number;
  flushMs?: number;
  /** Results jobs taken at once; all that are buffered go into one transaction. */
  concurrency?: number;
  /** Dispatch nothing (the bench feeds results directly). */
  noDispatch?: boolean;
  /** Exit when no job is pending or leased in SQLite. */
  drain?: boolean;
  /** A chunk id missing from Redis this long (its results never came) goes back to the SQLite queue. */
  lostAfterMs?: number;
  log?: (line: string) => void;
}

export interface ResultWriter {
  run(): Promise<void>;
  stop(): void;
  readonly stopping: boolean;
  readonly totals: { dispatchedStars: number; chunks: number; written: number; ignored: number; transactions: number; dead: number; released: number };
}

export function createResultWriter(app: AppServices, options: ResultWriterOptions): ResultWriter {
  const { owner } = options;
  const log = options.log ?? (() => {});
  const connection = redisConnection(options.redisUrl);
  const jobsPerRound = options.jobsPerRound ?? 8;
  const leaseMs = options.leaseMs ?? DEFAULT_DISPATCH_LEASE_MS;
  const idleMs = options.idleMs ?? 200;
  const maxInFlight = options.maxInFlight ?? DEFAULT_MAX_IN_FLIGHT;
  const chunkAttempts = options.chunkAttempts ?? DEFAULT_CHUNK_ATTEMPTS;
  const backoffMs = options.backoffMs ?? 1_000;
  const flushRows = options.flushRows ?? 5_000;
  const flushMs = options.flushMs ?? 25;
  const lostAfterMs = options.lostAfterMs ?? 120_000;
  const store = new RedisDispatchStore(app.db);
  const queue = batchQueue(app.db);
  const claimOwner = `redis-dispatch:${owner}`;
  const anyOpen = app.db.$client.prepare("SELECT 1 FROM jobs WHERE status IN ('pending', 'leased') LIMIT 1");
  const totals = { dispatchedStars: 0, chunks: 0, written: 0, ignored: 0, transactions: 0, dead: 0, released: 0 };
  let stopping = false;
  let wake: (() => void) | null = null;

  const redis = new IORedis(connection);
  const fitQueue = new Queue<FitChunk>(FIT_QUEUE, { connection });
  const published = new Set<string>();

  const sleep = (ms: number) =>
    new Promise<void>((resolve) => {
      const t = setTimeout(() => {
        wake = null;
        resolve();
      }, ms);
      wake = () => {
        clearTimeout(t);
        wake = null;
        resolve();
      };
    });

  // Batches are finished one at a time, after the transaction that wrote their last result.
  let finishing: Promise<void> = Promise.resolve();
  const checkFinished = (batchIds: string[]) => {
    finishing = finishing.then(async () => {
      for (const b of batchIds) {
        try {
          if (await finishBatchIfDone(app, b)) log(`[${owner}] batch ${b} finished; the analyst who started it was e-mailed`);
        } catch (err) {
          log(`[${owner}] could not finish batch ${b}: ${err instanceof Error ? err.message : String(err)}`);
        }
      }
    });
    return finishing;
  };

  // --- writing: several results jobs per transaction -------------------------------------------
  let buffer: { data: ResultChunk; done: (err?: Error) => void }[] = [];
  let bufferedRows = 0;
  let flushTimer: NodeJS.Timeout | null = null;
  const flush = () => {
    if (flushTimer) clearTimeout(flushTimer);
    flushTimer = null;
    const taken = buffer;
    buffer = [];
    bufferedRows = 0;
    if (taken.length === 0) return;
    try {
      const out = store.writeResults(taken.map((b) => b.data));
      totals.written += out.written;
      totals.ignored += out.ignored;
      totals.transactions++;
      void checkFinished(out.batchIds).then(() => taken.forEach((b) => b.done()));
    } catch (err) {
      // SQLITE_BUSY or similar: BullMQ retries these results jobs with backoff.
      const e = err instanceof Error ? err : new Error(String(err));
      taken.forEach((b) => b.done(e));
    }
  };
  const resultsWorker = new Worker<ResultChunk>(
    RESULTS_QUEUE,
    (job: Job<ResultChunk>) =>
      new Promise<void>((resolve, reject) => {
        buffer.push({ data: job.data, done: (err) => (err ? reject(err) : resolve()) });
        bufferedRows += job.data.rows.length;
        if (bufferedRows >= flushRows) flush();
        else if (!flushTimer) flushTimer = setTimeout(flush, flushMs);
      }),
    { connection, autorun: false, concurrency: options.concurrency ?? 16, lockDuration: 60_000, maxStalledCount: 10, name: `${owner}:writer` },
  );
  resultsWorker.on('error', (err) => log(`[${owner}] results queue: ${err.message}`));

  // --- dispatching --------------------------------------------------------------------------------
  async function publishLibrary(version: string) {
    if (published.has(version)) return;
    await redis.set(BAND_LIBRARY_KEY_PREFIX + version, store.bandLibraryJson(version));
    published.add(version);
  }

  async function dispatchOnce(): Promise<number> {
    const room = maxInFlight - store.inFlight();
    if (room <= 0) return 0;
    // Whole chunks (FIT_CHUNK_STARS stars each, made when the batch started); the last one may overshoot the room a little.
    const jobs = queue.claim(claimOwner, Math.max(1, Math.min(jobsPerRound, Math.floor(room / app.env.fitChunkStars))), leaseMs);
    if (jobs.length === 0) return 0;
    const foreign = jobs.filter((j) => !isFitJob(j.kind) || !j.batchId);
    if (foreign.length > 0) queue.fail(claimOwner, foreign.map((j) => ({ jobId: j.id, error: `no worker code for job kind "${j.kind}" on the Redis backend` })));
    const { chunks } = store.buildChunks(claimOwner, jobs);
    try {
      for (const v of new Set(chunks.map((c) => c.data.batch.bandLibraryVersion))) await publishLibrary(v);
      await fitQueue.addBulk(
        chunks.map((c) => ({
          name: 'fit',
          data: c.data,
          opts: { jobId: c.id, attempts: chunkAttempts, backoff: { type: 'exponential', delay: backoffMs, jitter: 0.5 }, removeOnComplete: true, removeOnFail: false },
        })),
      );
    } catch (err) {
      for (const c of chunks) store.releaseChunk(c.id);
      throw err;
    }
    const stars = chunks.reduce((n, c) => n + c.data.stars.length, 0);
    totals.dispatchedStars += stars;
    totals.chunks += chunks.length;
    log(`[${owner}] dispatched ${stars} star(s) in ${chunks.length} chunk(s)`);
    return stars;
  }

  // --- upkeep: dead chunks, lost chunks, leases ----------------------------------------------------
  async function buryFailed() {
    const failed = await fitQueue.getJobs(['failed'], 0, 99);
    for (const job of failed) {
      if (!job?.id) continue;
      // Let the results of the last attempt (posted before it threw) be written first.
      if (job.finishedOn && Date.now() - job.finishedOn < 2_000) continue;
      const out = store.buryChunk(job.id, job.failedReason || 'the chunk failed', job.attemptsMade);
      totals.dead += out.dead;
      if (out.dead > 0) log(`[${owner}] chunk ${job.id} gave up after ${job.attemptsMade} attempt(s): ${out.dead} star(s) recorded as failed (${job.failedReason})`);
      await checkFinished(out.batchIds);
      await job.remove();
    }
  }

  const missingSince = new Map<string, number>();
  async function releaseLost() {
    const open = store.openChunkIds();
    const openSet = new Set(open);
    for (const id of missingSince.keys()) if (!openSet.has(id)) missingSince.delete(id);
    for (const id of open) {
      const state = await fitQueue.getJobState(id);
      if (state !== 'unknown') {
        missingSince.delete(id);
        continue;
      }
      // Completed chunks are removed from Redis at once; their results are normally written within
      // milliseconds. A chunk gone for lostAfterMs without results was lost (Redis restarted without
      // persistence, a key evicted): its stars go back to the queue and are dispatched again.
      const since = missingSince.get(id) ?? Date.now();
      missingSince.set(id, since);
      if (Date.now() - since >= lostAfterMs) {
        const n = store.releaseChunk(id);
        missingSince.delete(id);
        totals.released += n;
        if (n > 0) log(`[${owner}] chunk ${id} is no longer in Redis and its results never came: ${n} star(s) back in the queue`);
      }
    }
  }

  let upkeepRunning = false;
  const upkeep = async () => {
    if (upkeepRunning) return;
    upkeepRunning = true;
    try {
      store.renewAll(leaseMs);
      await buryFailed();
      await releaseLost();
    } catch (err) {
      log(`[${owner}] upkeep: ${err instanceof Error ? err.message : String(err)}`);
    } finally {
      upkeepRunning = false;
    }
  };

  async function run(): Promise<void> {
    // Dispatched jobs stay leased to their chunks across a restart of this process (upkeep renews
    // them again shortly if the database is busy right now).
    try {
      store.renewAll(leaseMs);
    } catch (err) {
      if (!isDatabaseError(err)) throw err;
      log(`[${owner}] lease renewal at start skipped: ${(err as Error).message}`);
    }
    let failures = 0;
    const upkeepTimer = setInterval(() => void upkeep(), Math.min(1_000, Math.max(100, Math.floor(leaseMs / 3))));
    const writing = resultsWorker.run();
    try {
      while (!stopping) {
        let n = 0;
        if (!options.noDispatch) {
          try {
            n = await dispatchOnce();
            failures = 0;
          } catch (err) {
            // A busy database (an import holding the write lock) or Redis away: wait longer each time.
            failures++;
            const waitMs = databaseBackoffMs(failures, Math.max(idleMs, 200));
            log(`[${owner}] dispatch failed, retrying in ${waitMs} ms: ${err instanceof Error ? err.message : String(err)}`);
            await sleep(waitMs);
            continue;
          }
        }
        if (n > 0) continue;
        if (options.drain && !anyOpen.get() && buffer.length === 0) break;
        await sleep(idleMs);
      }
    } finally {
      clearInterval(upkeepTimer);
      await resultsWorker.close();
      flush();
      await writing;
      await finishing;
      await fitQueue.close();
      redis.disconnect();
    }
  }

  return {
    run,
    stop() {
      stopping = true;
      wake?.();
    },
    get stopping() {
      return stopping;
    },
    totals,
  };
}
