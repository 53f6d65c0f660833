// The SQLite job queue against a real migrated database: claims never overlap (two connections,
// and two processes racing on one file), leases expire and return jobs, failed attempts back off
// and retry, the last attempt makes a job dead with its error and a failure result, and a job
// finished twice writes one result. Fit jobs are chunks of stars: a chunk that failed part-way keeps
// the results it made and its retry fits only the rest.
import { spawn } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../src/db/client';
import { projectRoot } from '../src/db/paths';
import { batchFailures, batchProgress, batchQueue, startBatch } from '../src/server/batches';
import { FitStarRunner, chunkError } from '../src/server/fit-job';
import { appVersion } from '../src/server/health';
import { backoffDelayMs, createSqliteQueue, type NewJob } from '../src/server/queue';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, createTestDatabase, type TestDatabase } from './setup/db';

const open: { cleanup: () => void }[] = [];
afterEach(() => {
  while (open.length) open.pop()!.cleanup();
});

function testDb(): TestDatabase {
  const t = createTestDatabase();
  open.push(t);
  return t;
}

const jobsOf = (n: number, prefix = 'k'): NewJob[] =>
  Array.from({ length: n }, (_, i) => ({ kind: 'test', batchId: null, payload: { i }, idempotencyKey: `${prefix}:${i}` }));

/** A clock the test moves by hand. */
function clock(start = 1_700_000_000_000) {
  let t = start;
  return { now: () => t, advance: (ms: number) => (t += ms) };
}

function statusOf(t: TestDatabase, id: number) {
  return t.sqlite.prepare('SELECT status, attempts, lease_owner AS owner, run_after AS runAfter, last_error AS lastError FROM jobs WHERE id = ?').get(id) as {
    status: string;
    attempts: number;
    owner: string | null;
    runAfter: number;
    lastError: string | null;
  };
}

describe('enqueue', () => {
  it('adds each idempotency key once, however often it is enqueued', () => {
    const t = testDb();
    const q = createSqliteQueue(t.db);
    expect(q.enqueue(jobsOf(10))).toBe(10);
    expect(q.enqueue(jobsOf(12))).toBe(2);
    expect(t.sqlite.prepare('SELECT count(*) FROM jobs').pluck().get()).toBe(12);
  });
});

describe('claim', () => {
  it('hands each job to one owner only when two connections claim in turn', () => {
    const t = testDb();
    const other = openDatabase(t.filePath);
    open.push({ cleanup: () => other.sqlite.close() });
    const a = createSqliteQueue(t.db);
    const b = createSqliteQueue(other.db);
    a.enqueue(jobsOf(100));
    const got = { a: [] as number[], b: [] as number[] };
    for (let round = 0; round < 20; round++) {
      got.a.push(...a.claim('a', 3, 60_000).map((j) => j.id));
      got.b.push(...b.claim('b', 4, 60_000).map((j) => j.id));
    }
    const all = [...got.a, ...got.b];
    expect(new Set(all).size).toBe(all.length);
    expect(all.length).toBe(100);
    const owners = t.sqlite.prepare("SELECT lease_owner, count(*) AS n FROM jobs WHERE status = 'leased' GROUP BY lease_owner").all();
    expect(owners).toEqual([
      { lease_owner: 'a', n: got.a.length },
      { lease_owner: 'b', n: got.b.length },
    ]);
  });

  it('hands each job to one owner only when two processes race on the same file', async () => {
    const racer = path.join(projectRoot(), 'tests/support/queue-racer.ts');
    // One race: two processes claim 3000 jobs in chunks of 5 from the same file at the same moment.
    const race = async () => {
      const t = testDb();
      const q = createSqliteQueue(t.db);
      q.enqueue(jobsOf(3000));
      const goFile = `${t.filePath}.go`;
      const run = (owner: string) => {
        const child = spawn(process.execPath, ['--import', 'tsx', racer, t.filePath, owner, '5', goFile], { cwd: projectRoot(), stdio: ['ignore', 'pipe', 'pipe'] });
        let out = '';
        let err = '';
        child.stderr.on('data', (d) => (err += d));
        const ready = new Promise<void>((resolve) => child.stdout.on('data', (d) => ((out += d), out.startsWith('ready\n') && resolve())));
        const ids = new Promise<number[]>((resolve, reject) =>
          child.on('exit', (code) => (code === 0 ? resolve(JSON.parse(out.trim().split('\n').pop()!) as number[]) : reject(new Error(`racer ${owner} exited ${code}: ${err}`)))),
        );
        return { ready, ids };
      };
      const racers = [run('racer-a'), run('racer-b')];
      // Both have opened the database before either claims: the start is simultaneous.
      await Promise.all(racers.map((r) => r.ready));
      writeFileSync(goFile, 'go');
      const [a, b] = await Promise.all(racers.map((r) => r.ids));
      // Whatever the interleaving: no id twice, every job claimed once, each claimed by one attempt.
      const all = [...a, ...b];
      expect(new Set(all).size).toBe(3000);
      expect(all.length).toBe(3000);
      expect(t.sqlite.prepare("SELECT count(*) FROM jobs WHERE status = 'leased' AND attempts = 1").pluck().get()).toBe(3000);
      return { a: a.length, b: b.length };
    };
    // The race only tests something when both processes really took part. On a busy machine the
    // scheduler can let one process claim everything before the other wakes, so race again (each
    // race is checked in full) until both got a share.
    const shares: { a: number; b: number }[] = [];
    for (let attempt = 0; attempt < 5; attempt++) {
      const share = await race();
      shares.push(share);
      if (share.a > 0 && share.b > 0) break;
    }
    expect(shares.some((s) => s.a > 0 && s.b > 0), JSON.stringify(shares)).toBe(true);
  });

  it('claims by priority, then in order of enqueueing', () => {
    const t = testDb();
    const q = createSqliteQueue(t.db);
    q.enqueue([
      { kind: 'test', batchId: null, payload: {}, idempotencyKey: 'low-1' },
      { kind: 'test', batchId: null, payload: {}, idempotencyKey: 'high', priority: 5 },
      { kind: 'test', batchId: null, payload: {}, idempotencyKey: 'low-2' },
    ]);
    const keys = q.claim('w', 3, 1000).map((j) => (t.sqlite.prepare('SELECT idempotency_key FROM jobs WHERE id = ?').pluck().get(j.id)));
    expect(keys).toEqual(['high', 'low-1', 'low-2']);
  });
});

describe('leases', () => {
  it('returns a job whose lease expired to the queue, and the first owner can no longer finish it', () => {
    const t = testDb();
    const c = clock();
    const q = createSqliteQueue(t.db, { now: c.now });
    q.enqueue(jobsOf(1));
    const [job] = q.claim('a', 10, 1000);
    expect(q.claim('b', 10, 1000)).toEqual([]);
    c.advance(1001);
    const again = q.claim('b', 10, 1000);
    expect(again.map((j) => j.id)).toEqual([job.id]);
    expect(again[0].attempts).toBe(2);
    expect(statusOf(t, job.id).lastError).toMatch(/lease expired: worker a stopped/);
    expect(q.complete('a', [job.id])).toEqual([]);
    expect(q.renew('a', [job.id], 1000)).toEqual([]);
    expect(q.complete('b', [job.id])).toEqual([job.id]);
    expect(statusOf(t, job.id).status).toBe('done');
  });

  it('keeps a renewed lease', () => {
    const t = testDb();
    const c = clock();
    const q = createSqliteQueue(t.db, { now: c.now });
    q.enqueue(jobsOf(2));
    const jobs = q.claim('a', 10, 1000);
    c.advance(800);
    expect(q.renew('a', jobs.map((j) => j.id), 1000)).toEqual(jobs.map((j) => j.id));
    c.advance(800);
    expect(q.claim('b', 10, 1000)).toEqual([]);
    c.advance(300);
    expect(q.claim('b', 10, 1000)).toHaveLength(2);
  });

  it('hands back released jobs without counting the attempt', () => {
    const t = testDb();
    const q = createSqliteQueue(t.db);
    q.enqueue(jobsOf(3));
    const jobs = q.claim('a', 10, 60_000);
    expect(q.release('a', jobs.map((j) => j.id))).toBe(3);
    const again = q.claim('b', 10, 60_000);
    expect(again.map((j) => j.attempts)).toEqual([1, 1, 1]);
  });
});

describe('retries', () => {
  it('backs off exponentially with jitter between half and all of the delay', () => {
    expect(backoffDelayMs(1, 0, 1000)).toBe(500);
    expect(backoffDelayMs(1, 1, 1000)).toBe(1000);
    expect(backoffDelayMs(3, 0, 1000)).toBe(2000);
    expect(backoffDelayMs(3, 1, 1000)).toBe(4000);
    expect(backoffDelayMs(30, 1, 1000, 60_000)).toBe(60_000);
  });

  it('retries a failed job after its backoff, and not before', () => {
    const t = testDb();
    const c = clock();
    const q = createSqliteQueue(t.db, { now: c.now, random: () => 0.5, backoffBaseMs: 1000 });
    q.enqueue(jobsOf(1));
    const [job] = q.claim('a', 1, 60_000);
    const out = q.fail('a', [{ jobId: job.id, error: 'disk hiccup' }]);
    expect(out.retried).toEqual([{ jobId: job.id, runAfter: c.now() + 750 }]);
    expect(statusOf(t, job.id)).toMatchObject({ status: 'pending', attempts: 1, owner: null, lastError: 'disk hiccup' });
    c.advance(749);
    expect(q.claim('a', 1, 60_000)).toEqual([]);
    c.advance(1);
    const [second] = q.claim('a', 1, 60_000);
    expect(second.attempts).toBe(2);
    expect(q.fail('a', [{ jobId: job.id, error: 'again' }]).retried[0].runAfter).toBe(c.now() + 1500);
  });

  it('makes a job dead after its last attempt, keeps the error and calls the job kind', () => {
    const t = testDb();
    const c = clock();
    const dead: { id: number; error: string }[] = [];
    const q = createSqliteQueue(t.db, { now: c.now, backoffBaseMs: 10, onDead: (jobs, errorOf) => jobs.forEach((j) => dead.push({ id: j.id, error: errorOf(j.id) })) });
    q.enqueue([{ kind: 'test', batchId: null, payload: {}, idempotencyKey: 'x', maxAttempts: 3 }]);
    for (let attempt = 1; attempt <= 3; attempt++) {
      const [job] = q.claim('a', 1, 60_000);
      expect(job.attempts).toBe(attempt);
      const out = q.fail('a', [{ jobId: job.id, error: `boom ${attempt}` }]);
      expect(out.dead.length).toBe(attempt === 3 ? 1 : 0);
      c.advance(1000);
    }
    const id = t.sqlite.prepare('SELECT id FROM jobs').pluck().get() as number;
    expect(statusOf(t, id)).toMatchObject({ status: 'failed', attempts: 3, lastError: 'boom 3' });
    expect(dead).toEqual([{ id, error: 'boom 3' }]);
    expect(q.claim('a', 1, 60_000)).toEqual([]);
  });

  it('makes a job dead when its lease expires on the last attempt', () => {
    const t = testDb();
    const c = clock();
    const q = createSqliteQueue(t.db, { now: c.now });
    q.enqueue([{ kind: 'test', batchId: null, payload: {}, idempotencyKey: 'x', maxAttempts: 2 }]);
    q.claim('a', 1, 100);
    c.advance(200);
    expect(q.claim('b', 1, 100)[0].attempts).toBe(2);
    c.advance(200);
    const out = q.recoverExpired();
    expect(out.requeued).toBe(0);
    expect(out.dead).toHaveLength(1);
    expect(statusOf(t, out.dead[0].id).status).toBe('failed');
    expect(statusOf(t, out.dead[0].id).lastError).toMatch(/lease expired on the last of 2 attempts/);
  });
});

describe('fit chunks and their results', () => {
  it('writes one result per star when a chunk is delivered twice (lease lost, both workers finish)', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '5' });
    open.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    insertMockStars(t.db, { campaignId: campaign.id, count: 5 });
    const batch = startBatch(t.app, analyst, campaign.id, {});
    const c = clock(Date.now());
    const q = batchQueue(t.db, { now: c.now });
    const runner = new FitStarRunner(t.db);
    const rowsOf = (runs: ReturnType<FitStarRunner['run']>['runs']) => new Map(runs.map((r) => [r.job.id, r.rows]));

    const first = q.claim('a', 10, 1000);
    expect(first.map((j) => j.starCount)).toEqual([5]);
    const rowsA = rowsOf(runner.run(first).runs);
    c.advance(2000); // a stalls past its lease
    const second = q.claim('b', 10, 1000);
    expect(second.map((j) => j.id)).toEqual(first.map((j) => j.id));
    const rowsB = rowsOf(runner.run(second).runs);
    expect(q.complete('b', [...rowsB.keys()], (held) => runner.write(held.flatMap((id) => rowsB.get(id)!)))).toHaveLength(1);
    // a wakes up and tries to finish the same chunk: nothing is held, nothing is written.
    expect(q.complete('a', [...rowsA.keys()], (held) => runner.write(held.flatMap((id) => rowsA.get(id)!)))).toEqual([]);
    // Even a direct second write of the same results is a no-op (unique batch + star).
    expect(runner.write([...rowsA.values()].flat())).toBe(0);
    expect(t.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id)).toBe(5);
  });

  it('keeps the results of a chunk that failed part-way, retries only the rest, and counts stars', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '6' });
    open.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    const stars = insertMockStars(t.db, { campaignId: campaign.id, count: 6 });
    const batch = startBatch(t.app, analyst, campaign.id, {});
    const c = clock(Date.now());
    const q = batchQueue(t.db, { now: c.now, random: () => 0, backoffBaseMs: 10 });
    const runner = new FitStarRunner(t.db);
    // Two stars throw on the first attempt (an injected fault around the real fit, as a read error
    // would): unexpected errors, not data failures.
    const broken = [stars[1].id, stars[4].id];
    const realFit = runner.run.bind(runner);
    const throwing = new Set(broken);
    runner.run = (jobs) => {
      const out = realFit(jobs);
      for (const r of out.runs) {
        for (const row of r.rows.filter((x) => throwing.has(x.star_id))) {
          r.errors.push({ starId: row.star_id, starKey: null, error: 'the measurement table could not be read' });
        }
        r.rows = r.rows.filter((x) => !throwing.has(x.star_id));
      }
      return out;
    };
    const [job] = q.claim('a', 1, 60_000);
    const run1 = runner.run([job]).runs[0];
    expect(run1.rows).toHaveLength(4);
    const out = q.fail('a', [{ jobId: job.id, error: chunkError(run1.errors), starsLeft: run1.errors.length }], () => runner.write(run1.rows));
    expect(out.retried).toHaveLength(1);
    expect(t.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id)).toBe(4);
    expect(batchProgress(t.db, batch.id)).toMatchObject({ fitted: 4, waiting: 2, retrying: 2, running: 0 });
    const failures = batchFailures(t.db, batch.id);
    expect(failures.retrying).toEqual([
      { starKey: stars[1].starKey, stars: 2, attempts: 1, maxAttempts: 5, lastError: expect.stringMatching(/^star \d+: the measurement table could not be read \(and 1 more star of the chunk\)$/), nextTryAt: expect.any(String) },
    ]);
    // The retry fits only the two stars still without a result; they work now.
    throwing.clear();
    c.advance(1000);
    const [again] = q.claim('a', 1, 60_000);
    expect(again.starsLeft).toBe(2);
    const run2 = runner.run([again]).runs[0];
    expect(run2.rows.map((r) => r.star_id).sort()).toEqual([...broken].sort());
    expect(q.complete('a', [again.id], () => runner.write(run2.rows))).toEqual([again.id]);
    const perStar = t.sqlite.prepare('SELECT star_id, count(*) AS n FROM fit_results WHERE batch_id = ? GROUP BY star_id').all(batch.id) as { n: number }[];
    expect(perStar).toHaveLength(6);
    expect(perStar.every((r) => r.n === 1)).toBe(true);
    expect(batchProgress(t.db, batch.id)).toMatchObject({ waiting: 0, running: 0 });
  });

  it('records a failure result naming the error for each star without a result when a chunk gives up', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '3' });
    open.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    const stars = insertMockStars(t.db, { campaignId: campaign.id, count: 3 });
    const batch = startBatch(t.app, analyst, campaign.id, {});
    t.sqlite.prepare('UPDATE jobs SET max_attempts = 2').run();
    const c = clock(Date.now());
    const q = batchQueue(t.db, { now: c.now, backoffBaseMs: 10 });
    const runner = new FitStarRunner(t.db);
    for (let i = 0; i < 2; i++) {
      const [job] = q.claim('a', 1, 60_000);
      // The first attempt made the first star's result; the others threw.
      const run = runner.run([job]).runs[0];
      const keep = i === 0 ? run.rows.filter((r) => r.star_id === stars[0].id) : [];
      q.fail('a', [{ jobId: job.id, error: 'the measurement table could not be read', starsLeft: run.rows.length + run.errors.length - keep.length }], () => runner.write(keep));
      c.advance(1000);
    }
    const result = t.sqlite.prepare('SELECT ok, failure_reason, star_id, band_library_version, software_version FROM fit_results WHERE batch_id = ? ORDER BY star_id').all(batch.id);
    const gaveUp = { ok: 0, failure_reason: 'gave up after 2 attempts: the measurement table could not be read', band_library_version: 'starter-1', software_version: appVersion() };
    expect(result).toEqual([
      { ok: 1, failure_reason: null, star_id: stars[0].id, band_library_version: 'starter-1', software_version: appVersion() },
      { ...gaveUp, star_id: stars[1].id },
      { ...gaveUp, star_id: stars[2].id },
    ]);
    expect(t.sqlite.prepare('SELECT status, stars_left FROM jobs WHERE batch_id = ?').get(batch.id)).toEqual({ status: 'failed', stars_left: 2 });
  });

  it('still runs a one-star job enqueued before chunks existed', async () => {
    const t = createTestApp();
    open.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    const [star] = insertMockStars(t.db, { campaignId: campaign.id, count: 1 });
    const batch = startBatch(t.app, analyst, campaign.id, {});
    t.sqlite.prepare("UPDATE jobs SET kind = 'fit-star', payload = json_object('starId', ?), star_count = 1, stars_left = 1").run(star.id);
    const q = batchQueue(t.db);
    const runner = new FitStarRunner(t.db);
    const [job] = q.claim('a', 1, 60_000);
    const run = runner.run([job]).runs[0];
    expect(q.complete('a', [job.id], () => runner.write(run.rows))).toEqual([job.id]);
    expect(t.sqlite.prepare('SELECT star_id, ok FROM fit_results WHERE batch_id = ?').all(batch.id)).toEqual([{ star_id: star.id, ok: 1 }]);
  });
});
