// Real processes on the Redis backend: the result writer on a temporary database and two fit
// workers (`workers/index.ts --backend redis`). One fit worker is killed with SIGKILL while it holds
// a chunk; BullMQ's stalled-chunk check hands that chunk to the other worker. Every star still ends
// with exactly one result, nothing is written twice, the batch finishes and the analyst gets one e-mail.
import { Queue } from 'bullmq';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startBatch } from '../src/server/batches';
import { FIT_QUEUE, redisConnection } from '../src/server/queue-redis';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';
import { startTestRedis, type TestRedis } from './support/redis';
import { killAll, spawnWorker, stopGracefully, waitFor } from './support/redis-processes';

let redis: TestRedis;
beforeAll(async () => {
  redis = await startTestRedis();
});
afterAll(async () => {
  killAll();
  await redis?.stop();
});
const apps: TestApp[] = [];
afterEach(() => {
  killAll();
  for (const a of apps.splice(0)) a.cleanup();
});

describe('Redis backend, worker processes', () => {
  it('loses nothing and duplicates nothing when a fit worker is killed mid-batch', async () => {
    const STARS = 1500;
    const t = createTestApp({ FIT_CHUNK_STARS: '50' });
    apps.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    insertMockStars(t.db, { campaignId: campaign.id, count: STARS, fewBandsEvery: 250 });
    const batch = startBatch(t.app, analyst, campaign.id, {});
    const one = <T>(q: string, ...p: unknown[]) => t.sqlite.prepare(q).pluck().get(...p) as T;

    const writer = spawnWorker(['--role', 'writer', '--id', 'writer', '--redis-url', redis.url, '--idle-ms', '50', '--drain'], { databasePath: t.filePath });
    const fit = ['--redis-url', redis.url, '--lease-ms', '1500', '--slow-ms', '150'];
    const a = spawnWorker(['--id', 'worker-a', ...fit]);
    const b = spawnWorker(['--id', 'worker-b', ...fit]);
    const logs = () => `--- writer\n${writer.output()}\n--- a\n${a.output()}\n--- b\n${b.output()}`;

    const fitQueue = new Queue(FIT_QUEUE, { connection: redisConnection(redis.url) });
    try {
      let killedChunk = '';
      await waitFor(
        'worker-a to hold a chunk after some results exist',
        async () => {
          if (one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id) < 200) return false;
          const active = await fitQueue.getActive();
          const held = active.find((j) => j.processedBy === 'worker-a');
          killedChunk = held?.id ?? '';
          return !!held;
        },
        60_000,
        logs,
      );
      // Frozen first, so it cannot finish the chunk between the check above and the kill (on a
      // loaded machine that gap can be long); the chunk it holds now is the one it dies with.
      a.child.kill('SIGSTOP');
      const stillHeld = (await fitQueue.getActive()).find((j) => j.processedBy === 'worker-a');
      if (stillHeld?.id) killedChunk = stillHeld.id;
      a.child.kill('SIGKILL');
      expect((await a.exited).signal).toBe('SIGKILL');
      // Its chunk is still leased to that chunk in SQLite: no result was written for it.
      const orphaned = t.sqlite.prepare('SELECT id FROM jobs WHERE status = ? AND lease_owner = ?').pluck().all('leased', `redis:${killedChunk}`) as number[];
      expect(orphaned.length).toBeGreaterThan(0);
      expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBeLessThan(STARS);

      const wExit = await Promise.race([writer.exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`the writer did not drain:\n${logs()}`)), 90_000))]);
      expect(wExit.code, logs()).toBe(0);

      // The killed worker's chunk was recovered by BullMQ's stalled check and fitted by worker-b.
      const recovered = t.sqlite.prepare('SELECT status FROM jobs WHERE id IN (SELECT value FROM json_each(?))').pluck().all(JSON.stringify(orphaned));
      expect(recovered.every((s) => s === 'done')).toBe(true);
      expect(b.output()).toContain(`chunk ${killedChunk}:`);

      expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
      expect(one<number>('SELECT count(DISTINCT star_id) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
      expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ? AND ok = 0', batch.id)).toBe(STARS / 250);
      expect(one<number>("SELECT count(*) FROM jobs WHERE batch_id = ? AND status != 'done'", batch.id)).toBe(0);
      expect(one<string>('SELECT status FROM batches WHERE id = ?', batch.id)).toBe('finished');
      const mails = t.sqlite.prepare("SELECT to_address AS toAddress, subject FROM outbox_messages WHERE kind = 'notice'").all() as { toAddress: string; subject: string }[];
      expect(mails).toHaveLength(1);
      expect(mails[0].toAddress).toBe(analyst.email);
      expect(mails[0].subject).toContain(`${STARS - STARS / 250} fitted`);
      expect(await fitQueue.count()).toBe(0);

      expect((await stopGracefully(b)).code, logs()).toBe(0);
      expect(b.output()).toMatch(/SIGTERM/);
    } finally {
      await fitQueue.close();
    }
  }, 120_000);
});
