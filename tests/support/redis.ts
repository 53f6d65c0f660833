// A private redis-server per test file: Debian's /usr/bin/redis-server on a free port, no
// persistence, a temporary directory, stopped afterwards. No global service is needed; CI installs
// the package (scripts/test-setup.sh). A missing binary FAILS the test with a clear message.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';

export interface TestRedis {
  url: string;
  host: string;
  port: number;
  stop: () => Promise<void>;
}

export function redisServerPath(): string {
  for (const p of ['/usr/bin/redis-server', '/usr/local/bin/redis-server']) if (existsSync(p)) return p;
  const which = spawnSync('sh', ['-c', 'command -v redis-server'], { encoding: 'utf8' });
  const found = which.stdout.trim();
  if (which.status === 0 && found) return found;
  throw new Error('redis-server is not installed: the Redis backend tests need it. Run `npm run test:setup` (installs Debian\'s redis-server) or `apt-get install redis-server`.');
}

async function freePort(host: string): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once('error', reject);
    srv.listen(0, host, () => {
      const port = (srv.address() as net.AddressInfo).port;
      srv.close(() => resolve(port));
    });
  });
}

async function waitForPort(host: string, port: number, child: ChildProcess, output: () => string, timeoutMs = 10_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    if (child.exitCode !== null) throw new Error(`redis-server exited (${child.exitCode}):\n${output()}`);
    const ok = await new Promise<boolean>((resolve) => {
      const s = net.connect({ host, port }, () => {
        s.end();
        resolve(true);
      });
      s.once('error', () => resolve(false));
    });
    if (ok) return;
    if (Date.now() > deadline) throw new Error(`redis-server did not listen on ${host}:${port} within ${timeoutMs} ms:\n${output()}`);
    await new Promise((r) => setTimeout(r, 30));
  }
}

/** Starts redis-server bound to `host` (default loopback) on a free port. */
export async function startTestRedis(host = '127.0.0.1'): Promise<TestRedis> {
  const bin = redisServerPath();
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-redis-'));
  const port = await freePort(host);
  const child = spawn(bin, ['--port', String(port), '--bind', host, '--save', '', '--appendonly', 'no', '--dir', dir, '--protected-mode', 'no', '--maxmemory-policy', 'noeviction'], {
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let out = '';
  child.stdout!.on('data', (d) => (out += d));
  child.stderr!.on('data', (d) => (out += d));
  await waitForPort(host, port, child, () => out);
  return {
    url: `redis://${host}:${port}`,
    host,
    port,
    stop: async () => {
      if (child.exitCode === null && child.signalCode === null) {
        const exited = new Promise((r) => child.once('exit', r));
        child.kill('SIGTERM');
        await Promise.race([exited, new Promise((r) => setTimeout(r, 3000))]);
        if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
      }
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
