// The Redis backend of the job queue (docs/decisions/0010-redis-queue-backend.md): BullMQ carries
// chunks of fit-star work to workers on any machine; the web host's SQLite file stays the record.
//
// Glossary additions (the rest is in src/server/queue.ts):
//   dispatch   the web host's result writer claims pending fit-star jobs in SQLite like any worker,
//              with lease owner `redis:<chunk id>`, and adds one BullMQ job per chunk carrying
//              everything a fit needs (photometry, options, band library version). The SQLite
//              jobs table is the outbox: a batch is started exactly as with the SQLite backend.
//   chunk      one BullMQ job on the `starkiln-fit` queue: up to `chunkSize` stars of one batch.
//   results    one BullMQ job on the `starkiln-fit-results` queue: a chunk's result rows, added
//              by the fit worker before its chunk completes. The writer stores them in batched
//              SQLite transactions; a chunk delivered twice writes once (the jobs must still be
//              leased to that chunk, and fit_results is unique on (batch_id, star_id)).
//   band table a band library version as JSON under `starkiln:band-library:<version>`, written by
//              the dispatcher before the first chunk that needs it; workers read it once and cache it.
//
// Retries, backoff and stalled-chunk recovery are BullMQ's (attempts, exponential backoff with
// jitter, lock + stalled checks). A chunk that used its last attempt is buried here: its stars
// that still have no result get a failure result naming the error, as with the SQLite backend.
import type { AppDatabase } from '../db/client';
import { FIT_STAR_JOB, FitStarRunner, bandLibraryByVersion, type BatchInfo, type FitResultRow, type MeasurementRow } from './fit-job';
import type { ClaimedJob } from './queue';

export const FIT_QUEUE = 'starkiln-fit';
export const RESULTS_QUEUE = 'starkiln-fit-results';
export const BAND_LIBRARY_KEY_PREFIX = 'starkiln:band-library:';
/** SQLite lease owners of dispatched jobs start with this, followed by the chunk id. */
export const REDIS_OWNER_PREFIX = 'redis:';

export const DEFAULT_REDIS_CHUNK = 500;
/** Attempts of one chunk on the fit queue (BullMQ's `attempts`). */
export const DEFAULT_CHUNK_ATTEMPTS = 5;
/** SQLite lease of dispatched jobs; the writer renews it while it runs. */
export const DEFAULT_DISPATCH_LEASE_MS = 10 * 60_000;
/** Stars handed to Redis and not yet written back, at most (keeps Redis memory bounded for huge batches). */
export const DEFAULT_MAX_IN_FLIGHT = 50_000;

export interface ChunkStar {
  /** SQLite job id (fit-star:<batch>:<star>). */
  jobId: number;
  starId: number;
  starKey: string;
  parallaxMas: number | null;
  parallaxErrMas: number | null;
  avMag: number | null;
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

/** The chunk id (BullMQ job id; no ':' allowed there): batch and the first and last SQLite job ids. */
export function chunkIdOf(batchId: string, jobIds: number[]): string {
  return `${batchId}.${jobIds[0]}-${jobIds[jobIds.length - 1]}.${jobIds.length}`;
}

export function chunkIdOfOwner(owner: string | null): string | null {
  return owner && owner.startsWith(REDIS_OWNER_PREFIX) ? owner.slice(REDIS_OWNER_PREFIX.length) : null;
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
      stars: this.sqlite.prepare('SELECT id, star_key, parallax_mas, parallax_err_mas, av_mag FROM stars WHERE id IN (SELECT value FROM json_each(?))'),
      // Same order as FitStarRunner: the choice between two values in one band depends on it.
      measurements: this.sqlite.prepare(
        `SELECT star_id, band_key, source, mag, mag_err, fnu_jy, fnu_err_jy, upper_limit FROM measurements
         WHERE star_id IN (SELECT value FROM json_each(?)) ORDER BY star_id, band_key, source`,
      ),
      renewAll: this.sqlite.prepare(`UPDATE jobs SET lease_expires_at = ? WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`),
      inFlight: this.sqlite.prepare(`SELECT count(*) FROM jobs WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`).pluck(),
      owners: this.sqlite.prepare(`SELECT DISTINCT lease_owner FROM jobs WHERE status = 'leased' AND lease_owner LIKE 'redis:%'`).pluck(),
      bury: this.sqlite.prepare(
        `UPDATE jobs SET status = 'failed', last_error = ?, finished_at = ?, lease_owner = NULL, lease_expires_at = NULL
         WHERE status = 'leased' AND lease_owner = ?
         RETURNING id, kind, batch_id, payload, priority, attempts, max_attempts`,
      ),
      markRunning: this.sqlite.prepare("UPDATE batches SET status = 'running' WHERE id = ? AND status = 'queued'"),
      complete: this.sqlite.prepare(
        `UPDATE jobs SET status = 'done', finished_at = ?, lease_owner = NULL, lease_expires_at = NULL
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
   * Groups claimed jobs by batch into chunks, relabels their lease owner `redis:<chunk id>` and
   * reads each chunk's photometry. Jobs of another kind are returned in `foreign` untouched.
   */
  buildChunks(claimOwner: string, jobs: ClaimedJob[]): { chunks: { id: string; data: FitChunk }[]; foreign: ClaimedJob[] } {
    const foreign = jobs.filter((j) => j.kind !== FIT_STAR_JOB || !j.batchId);
    const byBatch = new Map<string, ClaimedJob[]>();
    for (const j of jobs) {
      if (j.kind !== FIT_STAR_JOB || !j.batchId) continue;
      let list = byBatch.get(j.batchId);
      if (!list) byBatch.set(j.batchId, (list = []));
      list.push(j);
    }
    const chunks: { id: string; data: FitChunk }[] = [];
    const build = this.sqlite.transaction(() => {
      for (const [batchId, group] of byBatch) {
        group.sort((a, b) => a.id - b.id);
        const jobIds = group.map((j) => j.id);
        const id = chunkIdOf(batchId, jobIds);
        for (const jid of jobIds) this.stmts.relabel.run(REDIS_OWNER_PREFIX + id, jid, claimOwner);
        const starIds = group.map((j) => Number(j.payload.starId));
        const stars = new Map<number, { id: number; star_key: string; parallax_mas: number | null; parallax_err_mas: number | null; av_mag: number | null }>();
        for (const s of this.stmts.stars.all(JSON.stringify(starIds)) as { id: number; star_key: string; parallax_mas: number | null; parallax_err_mas: number | null; av_mag: number | null }[]) stars.set(s.id, s);
        const measurements = new Map<number, MeasurementRow[]>();
        for (const m of this.stmts.measurements.all(JSON.stringify(starIds)) as MeasurementRow[]) {
          let list = measurements.get(m.star_id);
          if (!list) measurements.set(m.star_id, (list = []));
          list.push(m);
        }
        const chunkStars: ChunkStar[] = [];
        for (const j of group) {
          const starId = Number(j.payload.starId);
          const s = stars.get(starId);
          // A star deleted since the batch started: the worker reports it as an unexpected error,
          // exactly as the SQLite worker would ("no longer exists").
          chunkStars.push({
            jobId: j.id,
            starId,
            starKey: s?.star_key ?? '',
            parallaxMas: s?.parallax_mas ?? null,
            parallaxErrMas: s?.parallax_err_mas ?? null,
            avMag: s?.av_mag ?? null,
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
   * Writes results of several chunks in ONE transaction. Only jobs still leased to their chunk are
   * completed and written, so a chunk delivered twice (a retry, a stalled redelivery) writes once;
   * fit_results' unique (batch_id, star_id) with ON CONFLICT DO NOTHING is the last line.
   */
  writeResults(chunks: ResultChunk[]): { written: number; ignored: number; batchIds: string[] } {
    let written = 0;
    let ignored = 0;
    const batchIds = new Set<string>();
    const run = this.sqlite.transaction(() => {
      const t = Date.now();
      const rows: FitResultRow[] = [];
      for (const c of chunks) {
        const owner = REDIS_OWNER_PREFIX + c.chunkId;
        for (const r of c.rows) {
          if (this.stmts.complete.run(t, r.jobId, owner).changes === 1) rows.push(r.row);
          else ignored++;
        }
        if (c.rows.length > 0) batchIds.add(c.batchId);
      }
      for (const b of batchIds) this.stmts.markRunning.run(b);
      written = this.runner.write(rows);
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
        id: number; kind: string; batch_id: string | null; payload: string; priority: number; attempts: number; max_attempts: number;
      }[];
      const jobs: ClaimedJob[] = rows.map((r) => ({
        id: r.id, kind: r.kind, batchId: r.batch_id, payload: JSON.parse(r.payload) as Record<string, unknown>, priority: r.priority,
        attempts: Math.max(r.attempts, attempts), maxAttempts: r.max_attempts, leaseExpiresAt: 0, lastError: error,
      }));
      this.runner.writeDead(jobs, () => error);
      return { dead: jobs.length, batchIds: [...new Set(jobs.map((j) => j.batchId).filter((b): b is string => !!b))] };
    });
    return run.immediate();
  }
}
