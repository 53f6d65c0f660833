// The fit job kind as the worker runs it: fit a claimed chunk of stars, then complete the chunk in
// the transaction that writes its results; a chunk in which some star threw fails its attempt
// (the queue retries it with backoff) and writes the other stars' results in that same
// transaction, so the retry fits only the rest. The fitting itself lives in src/server/fit-job.ts,
// shared with tests and the benchmark.
import type { AppDatabase } from '../src/db/client';
import { FitStarRunner, chunkError, isFitJob, type ChunkRun } from '../src/server/fit-job';
import type { ClaimedJob, FailOutcome, JobFailure, JobQueue } from '../src/server/queue';

export { isFitJob };

export interface ChunkOutcome {
  /** Jobs completed. */
  completed: number;
  fitted: number;
  notFitted: number;
  fail: FailOutcome;
  batchIds: string[];
}

export interface FitStarHandlerOptions {
  /**
   * Hold the write transaction open this long after a chunk's rows are inserted and before it
   * commits (simulates a slow disk; tests kill a worker there). Logged first, so a test knows.
   */
  pauseInWriteMs?: number;
  log?: (line: string) => void;
}

/** A synchronous sleep: the transaction stays open, as it would on a stalled disk. */
function blockFor(ms: number) {
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms);
}

export function createFitStarHandler(db: AppDatabase, options: FitStarHandlerOptions = {}) {
  const runner = new FitStarRunner(db);
  const markRunning = db.$client.prepare("UPDATE batches SET status = 'running' WHERE id = ? AND status = 'queued'");
  return (queue: JobQueue, owner: string, jobs: ClaimedJob[]): ChunkOutcome => {
    const { runs, failures } = runner.run(jobs);
    const batchIds = [...new Set(jobs.map((j) => j.batchId).filter((b): b is string => !!b))];
    const byJob = new Map<number, ChunkRun>(runs.map((r) => [r.job.id, r]));
    let fitted = 0;
    let notFitted = 0;
    const write = (held: number[]) => {
      for (const b of batchIds) markRunning.run(b);
      const rows = held.flatMap((id) => byJob.get(id)?.rows ?? []);
      for (const r of rows) {
        if (r.ok) fitted++;
        else notFitted++;
      }
      runner.write(rows);
      if (options.pauseInWriteMs) {
        options.log?.(`pausing ${options.pauseInWriteMs} ms inside the write of ${rows.length} result(s), before commit`);
        blockFor(options.pauseInWriteMs);
      }
    };
    const whole = runs.filter((r) => r.errors.length === 0);
    const partial = runs.filter((r) => r.errors.length > 0);
    const completed = whole.length > 0 ? queue.complete(owner, whole.map((r) => r.job.id), write) : [];
    const allFailures: JobFailure[] = [...failures, ...partial.map((r) => ({ jobId: r.job.id, error: chunkError(r.errors), starsLeft: r.errors.length }))];
    const fail = allFailures.length > 0 ? queue.fail(owner, allFailures, partial.length > 0 ? write : undefined) : { retried: [], dead: [] };
    return { completed: completed.length, fitted, notFitted, fail, batchIds };
  };
}
