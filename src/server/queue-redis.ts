// The Redis backend of the job queue (docs/decisions/0010-redis-queue-backend.md): BullMQ carries
// chunks of fit-star work to workers on any machine; the web host's SQLite file stays the record.
//
// Glossary additions (the rest is in src/server/queue.ts):
//   dispatch   the web host's result writer claims pending fit jobs (chunks of stars) in SQLite like
//              any worker, relabels each one's lease owner `redis:<chunk id>`, and adds one BullMQ
//              job per chunk carrying everything a fit needs (photometry, options, band library
//              version). The SQLite jobs table is the outbox: a batch is started exactly as with the
//              SQLite backend, and its chunks (FIT_CHUNK_STARS stars each) are the BullMQ chunks.
//   chunk      one BullMQ job on the `starkiln-fit` queue: the stars of one SQLite fit job that still
//              have no result.
//   results    one BullMQ job on the `starkiln-fit-results` queue: a chunk's result rows, added
//              by the fit worker before its chunk completes. The writer stores them in batched
//              SQLite transactions; a chunk delivered twice writes once (the job must still be
//              leased to that chunk, and fit_results is unique on (batch_id, star_id)). The SQLite
//              job is done when every star of it has a result.
//   band table a band library version as JSON under `starkiln:band-library:<version>`, written by
//              the dispatcher before the first chunk that needs it; workers read it once and cache it.
//
// Retries, backoff and stalled-chunk recovery are BullMQ's (attempts, exponential backoff with
// jitter, lock + stalled checks). A chunk that used its last attempt is buried here: its stars
// that still have no result get a failure result naming the error, as with the SQLite backend.
import type { AppDatabase } from '../db/client';
import { FitStarRunner, bandLibraryByVersion, isFitJob, jobStarIds, starRowInput, type BatchInfo, type FitResultRow, type MeasurementRow } from './fit-job';
import type { StarInput } from '../core/fit';
import type { ClaimedJob } from './queue';

export const FIT_QUEUE = 'starkiln-fit';
export const RESULTS_QUEUE = 'starkiln-fit-results';
export const BAND_LIBRARY_KEY_PREFIX = 'starkiln:band-library:';
/** SQLite lease owners of dispatched jobs start with this, followed by the chunk id. */
export const REDIS_OWNER_PREFIX = 'redis:';

/** Attempts of one chunk on the fit queue (BullMQ's `attempts`). */
export const DEFAULT_CHUNK_ATTEMPTS = 5;
/** SQLite lease of dispatched jobs; the writer renews it while it runs. */
export const DEFAULT_DISPATCH_LEASE_MS = 10 * 60_000;
/** Stars handed to Redis and not yet written back, at most (keeps Redis memory bounded for huge batches). */
export const DEFAULT_MAX_IN_FLIGHT = 50_000;

export interface ChunkStar {
  /** SQLite job id (the fit chunk this star belongs to). */
  jobId: number;
  starId: number;
  starKey: string;
  /** The star's own fit inputs beside its photometry (starRowInput: parallax, distance, class, left-out values …). */
  input: Omit<StarInput, 'id' | 'bandFluxes'>;
  measurements: MeasurementRow[];
  /** The star was deleted after the batch started. */
  missing?: boolean;
}

/** The data of a chunk on the fit queue: all a worker needs, no database. */
export interface FitChunk {
  format: 1;
  batch: BatchInfo;
  stars: ChunkStar[];
}

/** The data of a results job: one chunk's rows, by SQLite job id. */
export interface ResultChunk {
  format: 1;
  chunkId: string;
  batchId: string;
  rows: { jobId: number; row: FitResultRow }[];
}

/** `redis://[user:pass@]host:port[/db]` → ioredis options (BullMQ needs maxRetriesPerRequest null on workers). */
export function redisConnection(url: string): { host: string; port: number; db: number; username?: string; password?: string; tls?: object; maxRetriesPerRequest: null } {
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    throw new Error(`Redis URL "${url}" is not a URL; expected redis://host:6379`);
  }
  if (u.protocol !== 'redis:' && u.protocol !== 'rediss:') throw new Error(`Redis URL "${url}" must start with redis:// or rediss://`);
  const db = u.pathname && u.pathname !== '/' ? Number(u.pathname.slice(1)) : 0;
  if (!Number.isInteger(db) || db < 0) throw new Error(`Redis URL "${url}": the database number after / must be a whole number`);
  return {
    host: u.hostname || '127.0.0.1',
    port: u.port ? Number(u.port) : 6379,
    db,
    ...(u.username ? { username: decodeURIComponent(u.username) } : {}),
    ...(u.password ? { password: decodeURIComponent(u.password) } : {}),
    ...(u.protocol === 'rediss:' ? { tls: {} } : {}),
    maxRetriesPerRequest: null,
  };
}

/** The chunk id (BullMQ job id; no ':' allowed there): batch, SQLite job id and its star count. */
export function chunkIdOf(batchId: string, job: { id: number; starCount: number }): string {
  return `${batchId}.${job.id}.${job.starCount}`;
}

/**
 * The SQLite side of the Redis backend: everything the web host's writer process does to the
 * record. One instance per process.
 */
export class RedisDispatchStore {
  private readonly runner: FitStarRunner;
  private readonly sqlite;
  private readonly stmts;

  constructor(private readonly db: AppDatabase) {
    this.runner = new FitStarRunner(db);
    this.sqlite = db.$client;
    this.stmts = {
      relabel: this.sqlite.prepare(`UPDATE jobs SET lease_owner = ? WHERE id = ? AND status = 'leased' AND lease_owner = ?`),
      renewAll: this.sqlite.prepare(`UPDATE jobs SET lease_expires_at = ? WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`),
      inFlight: this.sqlite.prepare(`SELECT coalesce(sum(stars_left), 0) FROM jobs WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`).pluck(),
      done: this.sqlite.prepare('SELECT star_id FROM fit_results WHERE batch_id = ? AND star_id IN (SELECT value FROM json_each(?))').pluck(),
      held: this.sqlite.prepare(`SELECT stars_left FROM jobs WHERE id = ? AND status = 'leased' AND lease_owner = ?`).pluck(),
      starsLeft: this.sqlite.prepare('UPDATE jobs SET stars_left = ? WHERE id = ?'),
      owners: this.sqlite.prepare(`SELECT DISTINCT lease_owner FROM jobs WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`).pluck(),
      bury: this.sqlite.prepare(
        `UPDATE jobs SET status = 'failed', last_error = ?, finished_at = ?, lease_owner = NULL, lease_expires_at = NULL
         WHERE status = 'leased' AND lease_owner = ?
         RETURNING id, kind, batch_id, payload, priority, attempts, max_attempts, star_count, stars_left`,
      ),
      markRunning: this.sqlite.prepare("UPDATE batches SET status = 'running' WHERE id = ? AND status = 'queued'"),
      complete: this.sqlite.prepare(
        `UPDATE jobs SET status = 'done', finished_at = ?, stars_left = 0, lease_owner = NULL, lease_expires_at = NULL
         WHERE id = ? AND status = 'leased' AND lease_owner = ?`,
      ),
      release: this.sqlite.prepare(
        `UPDATE jobs SET status = 'pending', attempts = max(attempts - 1, 0), lease_owner = NULL, lease_expires_at = NULL
         WHERE status = 'leased' AND lease_owner = ?`,
      ),
    };
  }

  batch(batchId: string): BatchInfo {
    return this.runner.batch(batchId);
  }

  /**
   * One chunk per claimed fit job: relabels its lease owner `redis:<chunk id>` and reads the
   * photometry of its stars that have no result yet. Jobs of another kind are returned in `foreign` untouched.
   */
  buildChunks(claimOwner: string, jobs: ClaimedJob[]): { chunks: { id: string; data: FitChunk }[]; foreign: ClaimedJob[] } {
    const foreign = jobs.filter((j) => !isFitJob(j.kind) || !j.batchId);
    const chunks: { id: string; data: FitChunk }[] = [];
    const build = this.sqlite.transaction(() => {
      for (const job of jobs) {
        if (!isFitJob(job.kind) || !job.batchId) continue;
        const batchId = job.batchId;
        const id = chunkIdOf(batchId, job);
        this.stmts.relabel.run(REDIS_OWNER_PREFIX + id, job.id, claimOwner);
        let starIds = jobStarIds(job);
        if (job.starsLeft < job.starCount || job.attempts > 1) {
          const done = new Set(this.stmts.done.all(batchId, JSON.stringify(starIds)) as number[]);
          starIds = starIds.filter((s) => !done.has(s));
        }
        // The same reads as the SQLite worker's (FitStarRunner.readStars), inside this transaction.
        const { stars, measurements, leftOut } = this.runner.readStars(starIds);
        const chunkStars: ChunkStar[] = [];
        for (const starId of starIds) {
          const s = stars.get(starId);
          // A star deleted since the batch started: the worker reports it as an unexpected error,
          // exactly as the SQLite worker would ("no longer exists").
          chunkStars.push({
            jobId: job.id,
            starId,
            starKey: s?.star_key ?? '',
            input: s ? starRowInput(s, leftOut.get(starId)) : {},
            measurements: s ? (measurements.get(starId) ?? []) : [],
            ...(s ? {} : { missing: true }),
          });
        }
        chunks.push({ id, data: { format: 1, batch: this.runner.batch(batchId), stars: chunkStars } });
      }
    });
    build.immediate();
    return { chunks, foreign };
  }

  /** The band library of a version as JSON for the band-table key (read by workers once). */
  bandLibraryJson(version: string): string {
    const lib = bandLibraryByVersion(this.db, version);
    return JSON.stringify({ format: 'starkiln-band-library', formatVersion: 1, version: lib.version, bands: Object.values(lib.bands) });
  }

  /** Keeps the leases of every dispatched job alive while the writer runs. */
  renewAll(leaseMs: number): number {
    return this.stmts.renewAll.run(Date.now() + leaseMs).changes;
  }

  inFlight(): number {
    return this.stmts.inFlight.get() as number;
  }

  /** Chunk ids that still have leased jobs in SQLite. */
  openChunkIds(): string[] {
    return (this.stmts.owners.all() as string[]).map((o) => o.slice(REDIS_OWNER_PREFIX.length));
  }

  /** Hands a chunk's jobs back to `pending` (Redis lost it, or adding it failed). */
  releaseChunk(chunkId: string): number {
    return this.stmts.release.run(REDIS_OWNER_PREFIX + chunkId).changes;
  }

  /**
   * Writes results of several chunks in ONE transaction. Only rows of jobs still leased to their
   * chunk are written, and fit_results' unique (batch_id, star_id) with ON CONFLICT DO NOTHING
   * ignores rows already stored, so a chunk delivered twice (a retry, a stalled redelivery) writes
   * once. A job is done when all of its stars have a result.
   */
  writeResults(chunks: ResultChunk[]): { written: number; ignored: number; batchIds: string[] } {
    let written = 0;
    let ignored = 0;
    const batchIds = new Set<string>();
    const run = this.sqlite.transaction(() => {
      const t = Date.now();
      for (const c of chunks) if (c.rows.length > 0) batchIds.add(c.batchId);
      for (const b of batchIds) this.stmts.markRunning.run(b);
      for (const c of chunks) {
        const owner = REDIS_OWNER_PREFIX + c.chunkId;
        const byJob = new Map<number, FitResultRow[]>();
        for (const r of c.rows) {
          let list = byJob.get(r.jobId);
          if (!list) byJob.set(r.jobId, (list = []));
          list.push(r.row);
        }
        for (const [jobId, rows] of byJob) {
          const left = this.stmts.held.get(jobId, owner) as number | undefined;
          if (left === undefined) {
            ignored += rows.length;
            continue;
          }
          const n = this.runner.write(rows);
          written += n;
          ignored += rows.length - n;
          if (left - n <= 0) this.stmts.complete.run(t, jobId, owner);
          else if (n > 0) this.stmts.starsLeft.run(left - n, jobId);
        }
      }
    });
    run.immediate();
    return { written, ignored, batchIds: [...batchIds] };
  }

  /**
   * A chunk that used its last BullMQ attempt: its stars still without a result are dead, each
   * with a failure result naming the error (same wording as the SQLite backend's dead jobs).
   */
  buryChunk(chunkId: string, error: string, attempts: number): { dead: number; batchIds: string[] } {
    const run = this.sqlite.transaction(() => {
      const rows = this.stmts.bury.all(error.slice(0, 2000), Date.now(), REDIS_OWNER_PREFIX + chunkId) as {
        id: number; kind: string; batch_id: string | null; payload: string; priority: number; attempts: number; max_attempts: number; star_count: number; stars_left: number;
      }[];
      const jobs: ClaimedJob[] = rows.map((r) => ({
        id: r.id, kind: r.kind, batchId: r.batch_id, payload: JSON.parse(r.payload) as Record<string, unknown>, priority: r.priority,
        attempts: Math.max(r.attempts, attempts), maxAttempts: r.max_attempts, leaseExpiresAt: 0, lastError: error, starCount: r.star_count, starsLeft: r.stars_left,
      }));
      const dead = this.runner.writeDead(jobs, () => error);
      return { dead, batchIds: [...new Set(jobs.map((j) => j.batchId).filter((b): b is string => !!b))] };
    });
    return run.immediate();
  }
}
