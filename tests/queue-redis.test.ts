// The Redis backend (BullMQ on a private redis-server) against the SQLite backend on real migrated
// databases: the same batch gives the same results field by field; results delivered twice are
// written once; a chunk BullMQ gives up on leaves a failure result per star on the batch page;
// the band tables are read from Redis once per band library version.
import IORedis from 'ioredis';
import { Queue } from 'bullmq';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { batchFailures, batchProgress, startBatch } from '../src/server/batches';
import { BAND_LIBRARY_KEY_PREFIX, FIT_QUEUE, RedisDispatchStore, redisConnection } from '../src/server/queue-redis';
import { createWorker } from '../workers/runner';
import { createRedisFitWorker } from '../workers/redis-worker';
import { createResultWriter, type ResultWriter } from '../workers/result-writer';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';
import { startTestRedis, type TestRedis } from './support/redis';

let redis: TestRedis;
beforeAll(async () => {
  redis = await startTestRedis();
});
afterAll(async () => {
  await redis?.stop();
});

const apps: TestApp[] = [];
const stops: (() => Promise<void>)[] = [];
afterEach(async () => {
  for (const s of stops.splice(0).reverse()) await s();
  for (const a of apps.splice(0)) a.cleanup();
  const r = new IORedis(redisConnection(redis.url));
  await r.flushall();
  r.disconnect();
});

const OPTIONS = { law: 'od94', rv: 3.3, floorFraction: 0.01, excludeBands: ['B'] };

async function world(stars: number, chunkStars = 40) {
  const t = createTestApp({ FIT_CHUNK_STARS: String(chunkStars) });
  apps.push(t);
  const analyst = await makeUser(t.app, { name: 'Ines Analyst' });
  const campaign = makeCampaign(t.app, analyst, { name: 'Kestrel Deep Field' });
  insertMockStars(t.db, { campaignId: campaign.id, count: stars, fewBandsEvery: 10, unconvertibleEvery: 7 });
  const batch = startBatch(t.app, analyst, campaign.id, { options: OPTIONS });
  return { t, analyst, campaign, batch };
}

async function waitFor(what: string, check: () => boolean | Promise<boolean>, timeoutMs = 30_000) {
  const deadline = Date.now() + timeoutMs;
  while (!(await check())) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

function startWriter(t: TestApp, extra: Partial<Parameters<typeof createResultWriter>[1]> = {}): { writer: ResultWriter; done: Promise<void> } {
  const writer = createResultWriter(t.app, { owner: 'writer-test', redisUrl: redis.url, idleMs: 20, ...extra });
  const done = writer.run();
  stops.push(async () => {
    writer.stop();
    await done;
  });
  return { writer, done };
}

function startFitWorker(owner: string, extra: Partial<Parameters<typeof createRedisFitWorker>[0]> = {}) {
  const w = createRedisFitWorker({ owner, redisUrl: redis.url, ...extra });
  const running = w.run();
  stops.push(async () => {
    await w.stop();
    await running;
  });
  return w;
}

/** Every fit_results column except the ones that name this database's rows (ids, batch, time). */
function resultsByStarKey(t: TestApp, batchId: string) {
  const rows = t.sqlite
    .prepare('SELECT s.star_key AS star_key_, r.* FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? ORDER BY s.star_key')
    .all(batchId) as Record<string, unknown>[];
  return rows.map(({ id: _id, batch_id: _b, campaign_id: _c, star_id: _s, created_at: _t, ...rest }) => rest);
}

describe('Redis backend', () => {
  it('fits the same batch to the same results as the SQLite backend, field by field', async () => {
    const STARS = 300;
    const viaSqlite = await world(STARS);
    await createWorker(viaSqlite.t.app, { owner: 'sqlite-worker', drain: true, idleMs: 5 }).run();

    const viaRedis = await world(STARS);
    startWriter(viaRedis.t);
    const a = startFitWorker('fit-a');
    const b = startFitWorker('fit-b');
    await waitFor('the Redis batch to finish', () => batchProgress(viaRedis.t.db, viaRedis.batch.id).status === 'finished');

    const expected = resultsByStarKey(viaSqlite.t, viaSqlite.batch.id);
    const got = resultsByStarKey(viaRedis.t, viaRedis.batch.id);
    expect(expected).toHaveLength(STARS);
    expect(got).toHaveLength(STARS);
    const columns = Object.keys(expected[0]);
    expect(columns).toContain('teff_k');
    expect(columns).toContain('detail');
    for (let i = 0; i < STARS; i++) {
      for (const c of columns) expect(got[i][c], `${String(expected[i].star_key_)} ${c}`).toStrictEqual(expected[i][c]);
    }
    // Stars 10, 20, … have one band only: a failure for a reason of the data, on both backends.
    expect(got.filter((r) => r.ok === 0)).toHaveLength(STARS / 10);

    // The same progress page numbers, and one e-mail to the analyst.
    const pSqlite = batchProgress(viaSqlite.t.db, viaSqlite.batch.id);
    const pRedis = batchProgress(viaRedis.t.db, viaRedis.batch.id);
    expect(pRedis).toMatchObject({ status: 'finished', fitted: pSqlite.fitted, failed: pSqlite.failed, waiting: 0, running: 0 });
    expect(viaRedis.t.sqlite.prepare("SELECT count(*) FROM outbox_messages WHERE kind = 'notice'").pluck().get()).toBe(1);
    expect(viaRedis.t.sqlite.prepare("SELECT count(*) FROM jobs WHERE batch_id = ? AND status != 'done'").pluck().get(viaRedis.batch.id)).toBe(0);

    // 300 stars in chunks of 40 went to two workers, each of which read the band tables once.
    expect(a.totals.chunks + b.totals.chunks).toBe(Math.ceil(STARS / 40));
    for (const w of [a, b]) if (w.totals.chunks > 0) expect(w.libraryFetches).toEqual([viaRedis.batch.bandLibraryVersion]);
  });

  it('writes a chunk delivered twice once', async () => {
    const { t, batch } = await world(30);
    const store = new RedisDispatchStore(t.db);
    const jobs = t.sqlite.prepare('SELECT id FROM jobs WHERE batch_id = ? ORDER BY id').pluck().all(batch.id) as number[];
    // Lease the batch's one chunk of 30 stars as the dispatcher does, then fit it with the worker's code.
    const claimed = (await import('../src/server/batches')).batchQueue(t.db).claim('redis-dispatch:test', 100, 60_000);
    expect(claimed.map((j) => j.starCount)).toEqual([30]);
    const { chunks } = store.buildChunks('redis-dispatch:test', claimed);
    expect(chunks).toHaveLength(1);
    const { fitChunk } = await import('../workers/redis-worker');
    const { prepareFitModel } = await import('../src/core/fit');
    const { extrapolatedBandKeys } = await import('../src/core/extinction');
    const { bandLibraryByVersion } = await import('../src/server/fit-job');
    const library = bandLibraryByVersion(t.db, batch.bandLibraryVersion);
    const data = chunks[0].data;
    const { rows, errors } = fitChunk(data, { model: prepareFitModel(library, data.batch.options), extrapolated: extrapolatedBandKeys(Object.values(library.bands), data.batch.options.law) });
    expect(errors).toEqual([]);
    const result = { format: 1 as const, chunkId: chunks[0].id, batchId: batch.id, rows };
    const first = store.writeResults([result, result]);
    expect(first).toMatchObject({ written: 30, ignored: 30 });
    expect(store.writeResults([result])).toMatchObject({ written: 0, ignored: 30 });
    expect(t.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id)).toBe(30);
    expect(jobs).toHaveLength(1);
    expect(t.sqlite.prepare('SELECT status, stars_left FROM jobs WHERE id = ?').get(jobs[0])).toEqual({ status: 'done', stars_left: 0 });
  });

  it('records a failure per star when a chunk uses its last attempt, shown on the batch page', async () => {
    const { t, batch } = await world(20, 10);
    startWriter(t, { chunkAttempts: 2, backoffMs: 10 });
    const conn = new IORedis(redisConnection(redis.url));
    stops.push(async () => conn.disconnect());
    const fitQueue = new Queue(FIT_QUEUE, { connection: redisConnection(redis.url) });
    stops.push(() => fitQueue.close());
    await waitFor('two chunks in Redis', async () => (await fitQueue.getWaitingCount()) === 2);
    // The band tables vanish from Redis (an operator flushed the key): every attempt fails.
    expect(await conn.del(BAND_LIBRARY_KEY_PREFIX + batch.bandLibraryVersion)).toBe(1);
    startFitWorker('fit-c');
    await waitFor('the batch to finish with failures', () => batchProgress(t.db, batch.id).status === 'finished', 40_000);
    const page = batchFailures(t.db, batch.id);
    expect(page.total).toBe(20);
    expect(page.failures.every((f) => f.kind === 'job' && /gave up after 2 attempts: .*not in Redis/.test(f.reason))).toBe(true);
    expect(t.sqlite.prepare("SELECT count(*), sum(star_count) FROM jobs WHERE batch_id = ? AND status = 'failed'").raw().get(batch.id)).toEqual([2, 20]);
    expect(await fitQueue.getFailedCount()).toBe(0);
  }, 60_000);
});
