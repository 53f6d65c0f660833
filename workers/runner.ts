// The worker loop: claim a chunk → run it → complete/fail → check whether its batches finished.
// A timer renews the leases of the chunk in hand; stop() lets the current chunk finish (or hands
// it back when asked to stop while waiting) and resolves once nothing is held.
import { batchQueue, finishBatchIfDone } from '../src/server/batches';
import type { AppServices } from '../src/server/context';
import type { ClaimedJob, JobQueue } from '../src/server/queue';
import { databaseBackoffMs, isDatabaseError } from '../src/server/sqlite-errors';
import { createFitStarHandler, isFitJob } from './fit-star';

export interface WorkerOptions {
  /** Lease owner name, unique per process (default host:pid). */
  owner: string;
  /** Jobs (chunks of stars) claimed at once; default 1. */
  jobsAtOnce?: number;
  leaseMs?: number;
  /** Wait between polls of an empty queue. */
  idleMs?: number;
  /** Extra time each chunk is held before it is fitted: simulates slow jobs (tests, demonstrations). */
  slowMs?: number;
  /** Hold each chunk's write transaction open this long before commit: simulates a stalled disk (tests). */
  pauseInWriteMs?: number;
  backoffBaseMs?: number;
  /** First wait after a database error (SQLITE_BUSY …), doubled per error in a row up to 30 s. */
  databaseBackoffMs?: number;
  /** Exit when no job is waiting or running anywhere (benchmarks, tests). */
  drain?: boolean;
  log?: (line: string) => void;
}

export interface Worker {
  /** One claim and its chunk(s); returns the number of stars claimed (0: nothing was waiting). */
  runOnce(): Promise<number>;
  /** Loop until stop() (or, with drain, until the queue is empty). */
  run(): Promise<void>;
  stop(): void;
  readonly stopping: boolean;
  readonly queue: JobQueue;
  readonly totals: { claimed: number; fitted: number; notFitted: number; retried: number; dead: number };
}

export function createWorker(app: AppServices, options: WorkerOptions): Worker {
  const owner = options.owner;
  const jobsAtOnce = options.jobsAtOnce ?? 1;
  const leaseMs = options.leaseMs ?? 60_000;
  const idleMs = options.idleMs ?? 500;
  const slowMs = options.slowMs ?? 0;
  const log = options.log ?? (() => {});
  const dbBackoffMs = options.databaseBackoffMs ?? 200;
  const deadBatches = new Set<string>();
  const queue = batchQueue(app.db, { backoffBaseMs: options.backoffBaseMs, onDeadBatches: (ids) => ids.forEach((b) => deadBatches.add(b)) });
  const handleFitStar = createFitStarHandler(app.db, { pauseInWriteMs: options.pauseInWriteMs, log: (line) => log(`[${owner}] ${line}`) });
  const anyOpen = app.db.$client.prepare("SELECT 1 FROM jobs WHERE status IN ('pending', 'leased') LIMIT 1");
  const totals = { claimed: 0, fitted: 0, notFitted: 0, retried: 0, dead: 0 };
  let held: number[] = [];
  let stopping = false;
  let wake: (() => void) | null = null;

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

  // Leases are renewed between chunks' synchronous steps; a chunk is fitted far faster than a lease lasts.
  // A busy database here only skips one renewal (a throw from a timer would end the process).
  const renewTimer = setInterval(() => {
    if (held.length === 0) return;
    try {
      held = queue.renew(owner, held, leaseMs);
    } catch (err) {
      if (!isDatabaseError(err)) throw err;
      log(`[${owner}] lease renewal skipped: ${(err as Error).message}`);
    }
  }, Math.max(50, Math.floor(leaseMs / 3)));
  renewTimer.unref();

  async function runOnce(): Promise<number> {
    const t0 = performance.now();
    const jobs: ClaimedJob[] = queue.claim(owner, jobsAtOnce, leaseMs);
    await checkFinished([...deadBatches]);
    deadBatches.clear();
    if (jobs.length === 0) return 0;
    held = jobs.map((j) => j.id);
    const stars = jobs.reduce((n, j) => n + j.starsLeft, 0);
    totals.claimed += jobs.length;
    if (slowMs > 0) {
      await sleep(slowMs);
      if (stopping) {
        const n = queue.release(owner, held);
        held = [];
        log(`[${owner}] stopping: handed back ${n} job(s) not yet started`);
        return stars;
      }
    }
    const mine = jobs.filter((j) => isFitJob(j.kind));
    const unknown = jobs.filter((j) => !isFitJob(j.kind));
    const out = handleFitStar(queue, owner, mine);
    const unknownFail = queue.fail(owner, unknown.map((j) => ({ jobId: j.id, error: `no worker code for job kind "${j.kind}"` })));
    held = [];
    const retried = out.fail.retried.length + unknownFail.retried.length;
    const dead = out.fail.dead.length + unknownFail.dead.length;
    totals.fitted += out.fitted;
    totals.notFitted += out.notFitted;
    totals.retried += retried;
    totals.dead += dead;
    const batchIds = new Set([...out.batchIds, ...[...out.fail.dead, ...unknownFail.dead].map((j) => j.batchId).filter((b): b is string => !!b)]);
    await checkFinished([...batchIds]);
    log(
      `[${owner}] ${jobs.length} job(s), ${stars} star(s): ${out.fitted} fitted, ${out.notFitted} not fitted, ${retried} job(s) to retry, ${dead} gave up` +
        `${out.completed + out.fail.retried.length + out.fail.dead.length < mine.length ? ', some lost to another worker' : ''} (${Math.round(performance.now() - t0)} ms)`,
    );
    return stars;
  }

  async function checkFinished(batchIds: string[]) {
    for (const b of batchIds) {
      if (await finishBatchIfDone(app, b)) log(`[${owner}] batch ${b} finished; the analyst who started it was e-mailed`);
    }
  }

  async function run(): Promise<void> {
    let failures = 0;
    try {
      while (!stopping) {
        let n: number;
        try {
          n = await runOnce();
          failures = 0;
        } catch (err) {
          // SQLITE_BUSY while an import holds the write lock longer than the busy timeout, or any
          // other database error: the chunk's jobs stay leased (their lease runs out and any worker
          // takes them again), and this worker waits and goes on instead of exiting.
          if (!isDatabaseError(err)) throw err;
          failures++;
          const waitMs = databaseBackoffMs(failures, dbBackoffMs);
          log(`[${owner}] database error (${(err as { code?: string }).code ?? 'unknown'}: ${(err as Error).message}); retrying in ${waitMs} ms (${failures} in a row)`);
          tryRelease();
          await sleep(waitMs);
          continue;
        }
        if (n > 0) {
          // Let timers (lease renewal) and signals run between chunks.
          await new Promise((r) => setImmediate(r));
          continue;
        }
        if (options.drain && !anyOpen.get()) break;
        await sleep(idleMs);
      }
    } finally {
      clearInterval(renewTimer);
      tryRelease();
    }
  }

  /** Hands back what this worker still holds after a failed chunk; a busy database leaves it to the lease. */
  function tryRelease() {
    if (held.length === 0) return;
    try {
      queue.release(owner, held);
    } catch {
      // the lease runs out instead
    }
    held = [];
  }

  return {
    runOnce,
    run,
    stop() {
      stopping = true;
      wake?.();
    },
    get stopping() {
      return stopping;
    },
    queue,
    totals,
  };
}
