// The fit-star job kind as the worker runs it: fit a claimed chunk, then complete the jobs that
// produced a result (fit or data-caused failure) in the transaction that writes those results, and
// fail the ones that threw so the queue retries them with backoff. The fitting itself lives in
// src/server/fit-job.ts, shared with tests and the benchmark.
import type { AppDatabase } from '../src/db/client';
import { FIT_STAR_JOB, FitStarRunner } from '../src/server/fit-job';
import type { ClaimedJob, FailOutcome, JobQueue } from '../src/server/queue';

export const kind = FIT_STAR_JOB;

export interface ChunkOutcome {
  completed: number;
  fitted: number;
  notFitted: number;
  fail: FailOutcome;
  batchIds: string[];
}

export function createFitStarHandler(db: AppDatabase) {
  const runner = new FitStarRunner(db);
  const markRunning = db.$client.prepare("UPDATE batches SET status = 'running' WHERE id = ? AND status = 'queued'");
  return (queue: JobQueue, owner: string, jobs: ClaimedJob[]): ChunkOutcome => {
    const { rows, failures } = runner.run(jobs);
    const batchIds = [...new Set(jobs.map((j) => j.batchId).filter((b): b is string => !!b))];
    let fitted = 0;
    let notFitted = 0;
    const completed = queue.complete(owner, [...rows.keys()], (held) => {
      for (const b of batchIds) markRunning.run(b);
      const mine = held.map((id) => rows.get(id)!);
      for (const r of mine) {
        if (r.ok) fitted++;
        else notFitted++;
      }
      runner.write(mine);
    });
    const fail = queue.fail(owner, failures);
    return { completed: completed.length, fitted, notFitted, fail, batchIds };
  };
}
