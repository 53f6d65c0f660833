// Spawns `workers/index.ts --backend redis` processes for the Redis tests: the result writer on the
// web host's database, and fit workers (optionally inside a network namespace via `ip netns exec`).
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { projectRoot } from '../../src/db/paths';

export interface Spawned {
  child: ChildProcess;
  output: () => string;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

const children: ChildProcess[] = [];

export function killAll(): void {
  for (const c of children.splice(0)) if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
}

export function spawnWorker(args: string[], opts: { databasePath?: string; netns?: string } = {}): Spawned {
  const root = projectRoot();
  const node = [process.execPath, '--import', 'tsx', path.join(root, 'workers/index.ts'), '--backend', 'redis', ...args];
  const [cmd, ...argv] = opts.netns ? ['ip', 'netns', 'exec', opts.netns, ...node] : node;
  // Fit workers get no DATABASE_PATH at all: they must not need one.
  const env: NodeJS.ProcessEnv = { ...process.env };
  delete env.DATABASE_PATH;
  if (opts.databasePath) {
    Object.assign(env, {
      DATABASE_PATH: opts.databasePath,
      BETTER_AUTH_SECRET: 'worker-test-secret-worker-test-secret-0123',
      BETTER_AUTH_URL: 'http://127.0.0.1:4321',
      MAIL_TRANSPORT: 'outbox',
    });
  }
  const child = spawn(cmd, argv, { cwd: root, env, stdio: ['ignore', 'pipe', 'pipe'] });
  children.push(child);
  let out = '';
  child.stdout!.on('data', (d) => (out += d));
  child.stderr!.on('data', (d) => (out += d));
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.on('exit', (code, signal) => resolve({ code, signal })));
  return { child, output: () => out, exited };
}

export async function waitFor(what: string, check: () => boolean | Promise<boolean>, timeoutMs: number, logs: () => string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!(await check())) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}; process output:\n${logs()}`);
    await new Promise((r) => setTimeout(r, 25));
  }
}

export async function stopGracefully(s: Spawned, timeoutMs = 20_000): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
  if (s.child.exitCode !== null || s.child.signalCode !== null) return s.exited;
  s.child.kill('SIGTERM');
  return Promise.race([s.exited, new Promise<never>((_, reject) => setTimeout(() => reject(new Error(`process did not stop on SIGTERM:\n${s.output()}`)), timeoutMs))]);
}
