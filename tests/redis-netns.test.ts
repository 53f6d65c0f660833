// Three fit worker processes on "other machines" share one batch through Redis. Each runs in its own
// network namespace that this test makes (ip netns, a veth pair per namespace onto a test bridge,
// addresses on a private test link 10.213.N.0/24 chosen free); redis-server listens only on the
// bridge's address, so the workers reach it over the test link as remote machines would. Where
// namespaces are not permitted the workers run on loopback instead, and the output says so.
// Everything the test creates is removed in afterAll.
import { spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startBatch } from '../src/server/batches';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';
import { startTestRedis, type TestRedis } from './support/redis';
import { killAll, spawnWorker, stopGracefully, waitFor, type Spawned } from './support/redis-processes';

const tag = randomBytes(2).toString('hex');
const bridge = `skbr${tag}`;
const namespaces = [0, 1, 2].map((i) => `sk${tag}n${i}`);
const created: string[] = [];

const ip = (...args: string[]) => spawnSync('ip', args, { encoding: 'utf8' });
function must(...args: string[]) {
  const r = ip(...args);
  if (r.status !== 0) throw new Error(`ip ${args.join(' ')}: ${r.stderr || r.error?.message}`);
}

/** A /24 in 10.213.0.0/16 that no route on this machine uses yet. */
function freeSubnet(): number | null {
  const routes = ip('-4', 'route', 'show', 'table', 'all').stdout ?? '';
  for (let n = 0; n < 255; n++) if (!routes.includes(`10.213.${n}.`)) return n;
  return null;
}

/** Makes the namespaces; returns the bridge address, or null when namespaces are not permitted here. */
function makeNetwork(): string | null {
  const probe = ip('netns', 'add', namespaces[0]);
  if (probe.status !== 0) {
    console.log(`redis-netns: network namespaces are not permitted here (${probe.stderr.trim()}); the three workers run on loopback instead`);
    return null;
  }
  created.push(`netns:${namespaces[0]}`);
  const n = freeSubnet();
  if (n === null) throw new Error('no free 10.213.N.0/24 test subnet');
  must('link', 'add', bridge, 'type', 'bridge');
  created.push(`link:${bridge}`);
  must('addr', 'add', `10.213.${n}.1/24`, 'dev', bridge);
  must('link', 'set', bridge, 'up');
  namespaces.forEach((ns, i) => {
    if (i > 0) {
      must('netns', 'add', ns);
      created.push(`netns:${ns}`);
    }
    const host = `skv${tag}${i}`;
    must('link', 'add', host, 'type', 'veth', 'peer', 'name', `skp${tag}${i}`);
    created.push(`link:${host}`);
    must('link', 'set', `skp${tag}${i}`, 'netns', ns);
    must('link', 'set', host, 'master', bridge);
    must('link', 'set', host, 'up');
    must('-n', ns, 'addr', 'add', `10.213.${n}.${10 + i}/24`, 'dev', `skp${tag}${i}`);
    must('-n', ns, 'link', 'set', `skp${tag}${i}`, 'up');
    must('-n', ns, 'link', 'set', 'lo', 'up');
  });
  return `10.213.${n}.1`;
}

function removeNetwork() {
  for (const what of created.splice(0).reverse()) {
    const [kind, name] = what.split(':');
    if (kind === 'netns') ip('netns', 'del', name);
    else ip('link', 'del', name);
  }
}

let redis: TestRedis;
let address: string | null = null;
let app: TestApp | null = null;
beforeAll(async () => {
  address = makeNetwork();
  redis = await startTestRedis(address ?? '127.0.0.1');
});
afterAll(async () => {
  killAll();
  await redis?.stop();
  removeNetwork();
  app?.cleanup();
});

describe('Redis backend across network namespaces', () => {
  it('three fit workers, each in its own network namespace, share one batch', async () => {
    const STARS = 1200;
    app = createTestApp({ FIT_CHUNK_STARS: '40' });
    const t = app;
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    insertMockStars(t.db, { campaignId: campaign.id, count: STARS });
    const batch = startBatch(t.app, analyst, campaign.id, {});

    // The writer on the "web host" (the root namespace) reaches Redis on the test link too.
    const writer = spawnWorker(['--role', 'writer', '--id', 'writer', '--redis-url', redis.url, '--idle-ms', '50', '--drain'], { databasePath: t.filePath });
    const workers: Spawned[] = namespaces.map((ns, i) =>
      spawnWorker(['--id', `remote-${i}`, '--redis-url', redis.url, '--slow-ms', '60'], address ? { netns: ns } : {}),
    );
    const logs = () => [writer, ...workers].map((p, i) => `--- ${i === 0 ? 'writer' : `remote-${i - 1}`}\n${p.output()}`).join('\n');

    if (address) {
      // Each worker process really lives in its namespace, and that namespace has only the test link.
      await waitFor('the workers to start', () => workers.every((w) => /fit worker started/.test(w.output())), 120_000, logs); // four tsx processes starting on a loaded machine
      namespaces.forEach((ns, i) => {
        const pids = ip('netns', 'pids', ns).stdout.split('\n').filter(Boolean).map(Number);
        expect(pids, logs()).toContain(workers[i].child.pid);
        const addrs = ip('-n', ns, '-4', '-o', 'addr', 'show').stdout;
        expect(addrs).toContain(`10.213.`);
        expect(addrs).not.toMatch(/eth0|ens|enp/);
      });
      expect(redis.url).toMatch(/^redis:\/\/10\.213\.\d+\.1:\d+$/);
    }

    const wExit = await Promise.race([writer.exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`the writer did not drain:\n${logs()}`)), 60_000))]);
    expect(wExit.code, logs()).toBe(0);
    const chunks: number[] = [];
    for (const w of workers) {
      expect((await stopGracefully(w)).code, logs()).toBe(0);
      chunks.push(Number(/stopped: (\d+) chunk/.exec(w.output())?.[1] ?? NaN));
    }
    // 1200 stars in chunks of 40: every worker took a share, and together exactly all of them.
    expect(chunks.every((c) => c > 0), logs()).toBe(true);
    expect(chunks.reduce((a, b) => a + b, 0)).toBe(STARS / 40);
    const one = <T>(q: string, ...p: unknown[]) => t.sqlite.prepare(q).pluck().get(...p) as T;
    expect(one<number>('SELECT count(*) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(one<number>('SELECT count(DISTINCT star_id) FROM fit_results WHERE batch_id = ?', batch.id)).toBe(STARS);
    expect(one<string>('SELECT status FROM batches WHERE id = ?', batch.id)).toBe('finished');
    console.log(`redis-netns: ${address ? `workers in namespaces ${namespaces.join(', ')}, Redis on ${address}` : 'workers on loopback'}; chunks per worker ${chunks.join(', ')}`);
  }, 90_000);
});
