// A fit worker on the Redis backend (`npm run worker -- --backend redis --redis-url redis://host:6379`):
// takes chunks from the BullMQ fit queue, fits them with the same code as the SQLite worker and
// hands the rows back on the results queue. It needs no database: a chunk carries its stars'
// photometry, the batch's options and the band library version, and the band tables are read from
// Redis once per version. Runs on any machine that reaches Redis. See docs/decisions/0010-redis-queue-backend.md.
import { Queue, Worker, type Job } from 'bullmq';
import IORedis from 'ioredis';
import type { BandLibrary } from '../src/core/bands';
import type { Band } from '../src/core/types';
import { extrapolatedBandKeys } from '../src/core/extinction';
import { fitStar, prepareFitModel, type FitModel } from '../src/core/fit';
import { resultRow, starBandFluxes, type FitResultRow } from '../src/server/fit-job';
import { BAND_LIBRARY_KEY_PREFIX, FIT_QUEUE, RESULTS_QUEUE, redisConnection, type FitChunk, type ResultChunk } from '../src/server/queue-redis';

export interface RedisWorkerOptions {
  owner: string;
  redisUrl: string;
  /** BullMQ lock on a chunk; a worker that stops renewing it (killed, hung) loses the chunk to the stalled check. */
  lockMs?: number;
  /** Hold each chunk this long before fitting it (simulates slow jobs in tests). */
  slowMs?: number;
  log?: (line: string) => void;
}

export interface RedisFitWorker {
  /** Resolves when the worker has closed (after stop()). */
  run(): Promise<void>;
  stop(): Promise<void>;
  readonly totals: { chunks: number; fitted: number; notFitted: number; errors: number };
  /** Band library versions fetched from Redis (each once). */
  readonly libraryFetches: string[];
}

/** Band tables of a version from Redis, once per version and process. */
export function createBandLibraryCache(redis: IORedis) {
  const cache = new Map<string, Promise<BandLibrary>>();
  const fetched: string[] = [];
  const get = (version: string): Promise<BandLibrary> => {
    let p = cache.get(version);
    if (!p) {
      p = (async () => {
        const json = await redis.get(BAND_LIBRARY_KEY_PREFIX + version);
        if (json === null) throw new Error(`band library version ${version} is not in Redis (key ${BAND_LIBRARY_KEY_PREFIX}${version}); the web host's result writer publishes it when it dispatches a batch`);
        const file = JSON.parse(json) as { version: string; bands: Band[] };
        if (file.version !== version) throw new Error(`band library key ${version} holds version ${file.version}`);
        const bands: Record<string, Band> = {};
        for (const b of file.bands) bands[b.key] = b;
        fetched.push(version);
        return { version, bands };
      })();
      // A failed read is not cached: the next chunk tries again.
      p.catch(() => cache.delete(version));
      cache.set(version, p);
    }
    return p;
  };
  return { get, fetched };
}

/** Fits one chunk; rows for the stars that produced a result, errors for the ones that threw. */
export function fitChunk(data: FitChunk, prepared: { model: FitModel; extrapolated: string[] }): { rows: { jobId: number; row: FitResultRow }[]; errors: string[] } {
  const rows: { jobId: number; row: FitResultRow }[] = [];
  const errors: string[] = [];
  for (const s of data.stars) {
    try {
      if (s.missing) throw new Error(`star ${s.starId} no longer exists in campaign ${data.batch.campaignId}`);
      const { bandFluxes, skipped } = starBandFluxes(prepared.model.library, s.measurements);
      const fit = fitStar(prepared.model, { id: s.starKey, bandFluxes, ...s.input });
      rows.push({ jobId: s.jobId, row: resultRow(data.batch, s.starId, fit, bandFluxes, skipped, prepared.extrapolated) });
    } catch (err) {
      errors.push(`${s.starKey || s.starId}: ${err instanceof Error ? err.message : String(err)}`);
    }
  }
  return { rows, errors };
}

export function createRedisFitWorker(options: RedisWorkerOptions): RedisFitWorker {
  const connection = redisConnection(options.redisUrl);
  const log = options.log ?? (() => {});
  const redis = new IORedis(connection);
  const libraries = createBandLibraryCache(redis);
  const models = new Map<string, { model: FitModel; extrapolated: string[] }>();
  const results = new Queue<ResultChunk>(RESULTS_QUEUE, { connection });
  const totals = { chunks: 0, fitted: 0, notFitted: 0, errors: 0 };
  const lockMs = options.lockMs ?? 60_000;

  const prepare = async (data: FitChunk) => {
    const key = `${data.batch.bandLibraryVersion}\u0000${JSON.stringify(data.batch.options)}`;
    let m = models.get(key);
    if (!m) {
      const library = await libraries.get(data.batch.bandLibraryVersion);
      m = { model: prepareFitModel(library, data.batch.options), extrapolated: extrapolatedBandKeys(Object.values(library.bands), data.batch.options.law) };
      models.set(key, m);
    }
    return m;
  };

  const handle = async (job: Job<FitChunk>) => {
    const t0 = performance.now();
    if (options.slowMs) await new Promise((r) => setTimeout(r, options.slowMs));
    const prepared = await prepare(job.data);
    const { rows, errors } = fitChunk(job.data, prepared);
    if (rows.length > 0) {
      // One results job per attempt: a retry after a partial failure brings the rows the first
      // attempt could not make; the writer ignores rows it already has.
      await results.add('results', { format: 1, chunkId: job.id!, batchId: job.data.batch.id, rows }, { jobId: `${job.id}.r${job.attemptsStarted}`, removeOnComplete: true, removeOnFail: 1000, attempts: 20, backoff: { type: 'exponential', delay: 500 } });
    }
    const fitted = rows.filter((r) => r.row.ok === 1).length;
    totals.chunks++;
    totals.fitted += fitted;
    totals.notFitted += rows.length - fitted;
    totals.errors += errors.length;
    log(`[${options.owner}] chunk ${job.id}: ${fitted} fitted, ${rows.length - fitted} not fitted, ${errors.length} error(s) (${Math.round(performance.now() - t0)} ms, attempt ${job.attemptsMade + 1})`);
    // BullMQ retries the chunk with backoff; stars already written are ignored by the writer.
    if (errors.length > 0) throw new Error(`${errors.length} of ${job.data.stars.length} star(s) failed unexpectedly; first: ${errors[0]}`);
    return { fitted, notFitted: rows.length - fitted };
  };

  const worker = new Worker<FitChunk>(FIT_QUEUE, handle, {
    connection,
    autorun: false,
    concurrency: 1,
    lockDuration: lockMs,
    stalledInterval: Math.max(500, Math.floor(lockMs / 2)),
    maxStalledCount: 2,
    name: options.owner,
  });
  worker.on('error', (err) => log(`[${options.owner}] ${err.message}`));

  return {
    run: () => worker.run(),
    async stop() {
      await worker.close();
      await results.close();
      redis.disconnect();
    },
    totals,
    libraryFetches: libraries.fetched,
  };
}
