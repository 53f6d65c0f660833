// The job queue the workers drain, kept in the app's SQLite file (docs/decisions/0008-sqlite-job-queue.md).
//
// Glossary (the same words in code, logs, pages and docs):
//   job       one unit of work of one kind, e.g. `fit-chunk` for a chunk of stars of one batch. Its
//             idempotency key (`fit-chunk:<batch>:<first star>`) makes enqueueing twice a no-op. A
//             job counts `stars` units (1 for kinds other than fit chunks); the progress counts add them.
//   chunk     a fit job's stars (docs/decisions/0017-chunked-fit-jobs.md): claimed, fitted, written
//             and completed together, one transaction per chunk.
//   claim     a worker takes up to N ready jobs at once; a job is ready when it is pending and its
//             runAfter has passed. Claiming sets status `leased`, the lease owner and expiry, and
//             counts one attempt, all in one UPDATE … RETURNING inside an IMMEDIATE transaction, so
//             two workers never hold the same job.
//   lease     the claim's time limit. The owner renews it while working; a lease that expires (the
//             worker was killed or hung) returns the job to the queue for any worker to claim again.
//   attempt   one claim of a job. A job that fails, or whose lease expires, after maxAttempts
//             attempts is dead: status `failed` with its last error, and its kind writes a failure
//             result so the batch still ends with one result per star.
//   backoff   after a failed attempt the job waits before it is ready again: exponential in the
//             attempt number with jitter (half fixed, half random) so retries of a chunk spread out.
//   release   a worker that stops gracefully hands back jobs it has not started; no attempt is
//             counted against them.
//
// Completing a job and writing its result happen in one transaction, and only for jobs the worker
// still holds: a job whose lease was lost to another worker is not completed twice, and the results
// table's unique (batch, star) key makes a second write of the same result a no-op regardless.
//
// The interface (JobQueue) is what workers, batches and the progress page use; this file holds the
// SQLite backend. Another backend only has to keep the same semantics.
import type Database from 'better-sqlite3';
import type { AppDatabase } from '../db/client';

export interface NewJob {
  kind: string;
  batchId: string | null;
  payload: Record<string, unknown>;
  idempotencyKey: string;
  priority?: number;
  maxAttempts?: number;
  /** Stars in the job (a fit chunk); default 1. */
  stars?: number;
}

export interface ClaimedJob {
  id: number;
  kind: string;
  batchId: string | null;
  payload: Record<string, unknown>;
  priority: number;
  /** Attempts so far, this one included. */
  attempts: number;
  maxAttempts: number;
  leaseExpiresAt: number;
  lastError: string | null;
  /** Stars in the job, and those still without a result (after an attempt that failed part-way). */
  starCount: number;
  starsLeft: number;
}

export interface JobFailure {
  jobId: number;
  error: string;
  /** Stars of the job still without a result after this attempt (a chunk that failed part-way); default unchanged. */
  starsLeft?: number;
}

export interface FailOutcome {
  /** Jobs that will be tried again after their backoff. */
  retried: { jobId: number; runAfter: number }[];
  /** Jobs that used their last attempt. */
  dead: ClaimedJob[];
}

/** Counts in stars (a fit chunk counts its stars still without a result; other jobs count 1). */
export interface QueueCounts {
  pending: number;
  /** Pending jobs that already failed at least once and wait for their backoff to pass. */
  retrying: number;
  leased: number;
  done: number;
  failed: number;
  /** Jobs finished (done or failed) within the last minute. */
  finishedLastMinute: number;
}

export interface JobQueue {
  /** Adds jobs; a job whose idempotency key exists already is left as it is. Returns how many were new. */
  enqueue(jobs: NewJob[]): number;
  /** Takes up to `limit` ready jobs for `owner` (expired leases are recovered first). */
  claim(owner: string, limit: number, leaseMs: number): ClaimedJob[];
  /** Extends the lease of the jobs `owner` still holds; returns their ids. */
  renew(owner: string, jobIds: number[], leaseMs: number): number[];
  /**
   * Marks the jobs `owner` still holds as done and, in the same transaction, calls `writeResults`
   * with exactly those jobs. Returns the ids completed.
   */
  complete(owner: string, jobIds: number[], writeResults?: (held: number[]) => void): number[];
  /**
   * Records failed attempts: backoff and retry, or dead after the last attempt. `writeResults` runs
   * first in the same transaction with the failed jobs `owner` still holds, so a chunk that failed
   * part-way keeps the results it made (before a dead job's kind writes failure results for the rest).
   */
  fail(owner: string, failures: JobFailure[], writeResults?: (held: number[]) => void): FailOutcome;
  /** Gives held jobs back without counting the attempt (graceful shutdown). */
  release(owner: string, jobIds: number[]): number;
  /** Returns jobs with expired leases to the queue (or to `failed` after their last attempt). */
  recoverExpired(): { requeued: number; dead: ClaimedJob[] };
  counts(batchId: string): QueueCounts;
}

export interface SqliteQueueOptions {
  /** Milliseconds since the epoch; tests move time forward instead of sleeping. */
  now?: () => number;
  /** Uniform [0, 1) for the backoff jitter. */
  random?: () => number;
  backoffBaseMs?: number;
  backoffMaxMs?: number;
  /**
   * Called inside the transaction that marks jobs dead (failed after their last attempt), so the
   * job kind can record a failure result atomically with the job's end.
   */
  onDead?: (jobs: ClaimedJob[], error: (jobId: number) => string) => void;
}

export const DEFAULT_MAX_ATTEMPTS = 5;
export const DEFAULT_BACKOFF_BASE_MS = 1_000;
export const DEFAULT_BACKOFF_MAX_MS = 5 * 60_000;

/**
 * Delay before attempt `attempts + 1`: base · 2^(attempts − 1), capped, with "equal jitter"
 * (half the delay fixed, half uniform random) — common practice for retry storms.
 */
export function backoffDelayMs(attempts: number, random: number, baseMs = DEFAULT_BACKOFF_BASE_MS, maxMs = DEFAULT_BACKOFF_MAX_MS): number {
  const exp = Math.min(maxMs, baseMs * 2 ** Math.max(0, attempts - 1));
  return Math.round(exp / 2 + (exp / 2) * random);
}

interface JobRow {
  id: number;
  kind: string;
  batch_id: string | null;
  payload: string;
  priority: number;
  attempts: number;
  max_attempts: number;
  lease_expires_at: number | null;
  last_error: string | null;
  star_count: number;
  stars_left: number;
}

function toClaimed(r: JobRow): ClaimedJob {
  return {
    id: r.id,
    kind: r.kind,
    batchId: r.batch_id,
    payload: JSON.parse(r.payload) as Record<string, unknown>,
    priority: r.priority,
    attempts: r.attempts,
    maxAttempts: r.max_attempts,
    leaseExpiresAt: r.lease_expires_at ?? 0,
    lastError: r.last_error,
    starCount: r.star_count,
    starsLeft: r.stars_left,
  };
}

const COLUMNS = 'id, kind, batch_id, payload, priority, attempts, max_attempts, lease_expires_at, last_error, star_count, stars_left';

export function createSqliteQueue(db: AppDatabase, options: SqliteQueueOptions = {}): JobQueue {
  const sqlite: Database.Database = db.$client;
  const now = options.now ?? Date.now;
  const random = options.random ?? Math.random;
  const baseMs = options.backoffBaseMs ?? DEFAULT_BACKOFF_BASE_MS;
  const maxMs = options.backoffMaxMs ?? DEFAULT_BACKOFF_MAX_MS;

  const insertJob = sqlite.prepare(
    `INSERT INTO jobs (kind, batch_id, payload, idempotency_key, priority, max_attempts, run_after, star_count, stars_left)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (idempotency_key) DO NOTHING`,
  );
  const selectExpired = sqlite.prepare(`SELECT ${COLUMNS} FROM jobs WHERE status = 'leased' AND lease_expires_at < ?`);
  const requeueExpired = sqlite.prepare(
    `UPDATE jobs SET status = 'pending', run_after = ?, lease_owner = NULL, lease_expires_at = NULL,
       last_error = 'the lease expired: worker ' || coalesce(lease_owner, '?') || ' stopped before finishing'
     WHERE id = ?`,
  );
  const markDead = sqlite.prepare(
    `UPDATE jobs SET status = 'failed', last_error = ?, finished_at = ?, lease_owner = NULL, lease_expires_at = NULL WHERE id = ?`,
  );
  // INDEXED BY: the planner does not know the partial index is the cheap way to stop after `limit`
  // rows in (priority desc, id) order; without it every claim sorts all pending jobs.
  const claimReady = sqlite.prepare(
    `UPDATE jobs SET status = 'leased', lease_owner = ?, lease_expires_at = ?, attempts = attempts + 1
     WHERE id IN (
       SELECT id FROM jobs INDEXED BY jobs_ready_idx
       WHERE status = 'pending' AND run_after <= ?
       ORDER BY priority DESC, id LIMIT ?)
     RETURNING ${COLUMNS}`,
  );
  const renewOne = sqlite.prepare(`UPDATE jobs SET lease_expires_at = ? WHERE id = ? AND status = 'leased' AND lease_owner = ?`);
  const completeOne = sqlite.prepare(
    `UPDATE jobs SET status = 'done', finished_at = ?, stars_left = 0, lease_owner = NULL, lease_expires_at = NULL
     WHERE id = ? AND status = 'leased' AND lease_owner = ?`,
  );
  const setStarsLeft = sqlite.prepare('UPDATE jobs SET stars_left = ? WHERE id = ?');
  const selectHeld = sqlite.prepare(`SELECT ${COLUMNS} FROM jobs WHERE id = ? AND status = 'leased' AND lease_owner = ?`);
  const retryOne = sqlite.prepare(
    `UPDATE jobs SET status = 'pending', run_after = ?, last_error = ?, lease_owner = NULL, lease_expires_at = NULL WHERE id = ?`,
  );
  const releaseOne = sqlite.prepare(
    `UPDATE jobs SET status = 'pending', attempts = max(attempts - 1, 0), lease_owner = NULL, lease_expires_at = NULL
     WHERE id = ? AND status = 'leased' AND lease_owner = ?`,
  );
  // Stars: a done job counts all of its stars, the others the stars still without a result.
  const countByStatus = sqlite.prepare(
    `SELECT status, sum(CASE WHEN status = 'done' THEN star_count ELSE stars_left END) AS n FROM jobs WHERE batch_id = ? GROUP BY status`,
  );
  const countRetrying = sqlite.prepare(`SELECT coalesce(sum(stars_left), 0) AS n FROM jobs WHERE batch_id = ? AND status = 'pending' AND attempts > 0`);
  const countRecent = sqlite.prepare(`SELECT coalesce(sum(star_count), 0) AS n FROM jobs WHERE batch_id = ? AND finished_at >= ?`);

  const buryDead = (dead: ClaimedJob[], errors: Map<number, string>, t: number) => {
    if (dead.length === 0) return;
    for (const j of dead) markDead.run(errors.get(j.id) ?? 'failed', t, j.id);
    options.onDead?.(dead, (id) => errors.get(id) ?? 'failed');
  };

  // Runs inside the caller's transaction.
  const recoverInTx = (t: number): { requeued: number; dead: ClaimedJob[] } => {
    const expired = (selectExpired.all(t) as JobRow[]).map(toClaimed);
    if (expired.length === 0) return { requeued: 0, dead: [] };
    const dead: ClaimedJob[] = [];
    const errors = new Map<number, string>();
    let requeued = 0;
    for (const j of expired) {
      if (j.attempts >= j.maxAttempts) {
        dead.push(j);
        errors.set(j.id, `the lease expired on the last of ${j.maxAttempts} attempts (the worker stopped or hung each time)`);
      } else {
        requeueExpired.run(t, j.id);
        requeued++;
      }
    }
    buryDead(dead, errors, t);
    return { requeued, dead };
  };

  const queue: JobQueue = {
    enqueue(jobs) {
      const t = now();
      const run = sqlite.transaction((list: NewJob[]) => {
        let added = 0;
        for (const j of list) {
          const stars = j.stars ?? 1;
          added += insertJob.run(j.kind, j.batchId, JSON.stringify(j.payload), j.idempotencyKey, j.priority ?? 0, j.maxAttempts ?? DEFAULT_MAX_ATTEMPTS, t, stars, stars).changes;
        }
        return added;
      });
      return run.immediate(jobs);
    },

    claim(owner, limit, leaseMs) {
      if (!(limit > 0)) return [];
      const run = sqlite.transaction(() => {
        const t = now();
        recoverInTx(t);
        const rows = claimReady.all(owner, t + leaseMs, t, limit) as JobRow[];
        return rows.map(toClaimed).sort((a, b) => b.priority - a.priority || a.id - b.id);
      });
      return run.immediate();
    },

    renew(owner, jobIds, leaseMs) {
      const run = sqlite.transaction(() => {
        const until = now() + leaseMs;
        return jobIds.filter((id) => renewOne.run(until, id, owner).changes === 1);
      });
      return run.immediate();
    },

    complete(owner, jobIds, writeResults) {
      const run = sqlite.transaction(() => {
        const t = now();
        const held = jobIds.filter((id) => completeOne.run(t, id, owner).changes === 1);
        if (held.length > 0) writeResults?.(held);
        return held;
      });
      return run.immediate();
    },

    fail(owner, failures, writeResults) {
      const run = sqlite.transaction(() => {
        const t = now();
        const retried: FailOutcome['retried'] = [];
        const dead: ClaimedJob[] = [];
        const errors = new Map<number, string>();
        const held: { f: JobFailure; row: JobRow }[] = [];
        for (const f of failures) {
          const row = selectHeld.get(f.jobId, owner) as JobRow | undefined;
          // Not ours any more (the lease expired and another worker took it): its outcome is theirs.
          if (row) held.push({ f, row });
        }
        if (held.length > 0) writeResults?.(held.map((h) => h.row.id));
        for (const { f, row } of held) {
          if (f.starsLeft !== undefined) {
            setStarsLeft.run(f.starsLeft, row.id);
            row.stars_left = f.starsLeft;
          }
          const job = toClaimed(row);
          const error = f.error.slice(0, 2000);
          if (job.attempts >= job.maxAttempts) {
            dead.push(job);
            errors.set(job.id, error);
          } else {
            const runAfter = t + backoffDelayMs(job.attempts, random(), baseMs, maxMs);
            retryOne.run(runAfter, error, job.id);
            retried.push({ jobId: job.id, runAfter });
          }
        }
        buryDead(dead, errors, t);
        return { retried, dead };
      });
      return run.immediate();
    },

    release(owner, jobIds) {
      const run = sqlite.transaction(() => jobIds.reduce((n, id) => n + releaseOne.run(id, owner).changes, 0));
      return run.immediate();
    },

    recoverExpired() {
      const run = sqlite.transaction(() => recoverInTx(now()));
      return run.immediate();
    },

    counts(batchId) {
      const c: QueueCounts = { pending: 0, retrying: 0, leased: 0, done: 0, failed: 0, finishedLastMinute: 0 };
      for (const r of countByStatus.all(batchId) as { status: string; n: number }[]) {
        if (r.status === 'pending') c.pending = r.n;
        else if (r.status === 'leased' || r.status === 'done' || r.status === 'failed') c[r.status] = r.n;
      }
      if (c.pending > 0) c.retrying = (countRetrying.get(batchId) as { n: number }).n;
      c.finishedLastMinute = (countRecent.get(batchId, now() - 60_000) as { n: number }).n;
      return c;
    },
  };
  return queue;
}
