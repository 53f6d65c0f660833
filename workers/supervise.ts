// `npm run worker`: keeps worker processes (workers/index.ts) alive. A child that dies (a crash, out
// of memory, kill -9) is started again after a wait that doubles with each death in a row (1 s up to
// 30 s; a child that ran a minute resets it). SIGTERM or Ctrl-C is passed to the children, which
// finish the chunk in hand; the supervisor exits once they have. A child that exits by itself with 0
// (--drain) or 2 (a usage mistake) is not restarted.
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { getEnv } from '../src/adapters/env';

const here = path.dirname(fileURLToPath(import.meta.url));
const entry = path.join(here, 'index.ts');

const usage = `Usage: npm run worker -- [--processes <n>] [worker options]
  --processes <n>      worker processes kept running (default WORKER_PROCESSES or 1); with --id <name>
                       they are named <name>-1, <name>-2 …
Every other option goes to each worker (see --help below).`;

const RESTART_BASE_MS = 1_000;
const RESTART_MAX_MS = 30_000;
/** A child that ran this long before dying starts the backoff afresh. */
const STABLE_AFTER_MS = 60_000;

function restartDelayMs(deathsInARow: number): number {
  return Math.min(RESTART_MAX_MS, RESTART_BASE_MS * 2 ** Math.max(0, deathsInARow - 1));
}

function parse(argv: string[]): { processes: number; rest: string[] } {
  const rest: string[] = [];
  const fromSettings = getEnv().workerProcesses;
  let processes = fromSettings ?? 1;
  let given: string | undefined = fromSettings === undefined ? undefined : String(fromSettings);
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--processes' || a.startsWith('--processes=')) {
      given = a.includes('=') ? a.slice(a.indexOf('=') + 1) : argv[++i];
      processes = Number(given);
    } else rest.push(a);
  }
  if (!Number.isInteger(processes) || processes < 1 || processes > 64) {
    console.error(`--processes (or WORKER_PROCESSES) must be a whole number from 1 to 64, got "${given}".\n${usage}`);
    process.exit(2);
  }
  return { processes, rest };
}

const { processes, rest } = parse(process.argv.slice(2));
if (rest.includes('--help') || rest.includes('-h')) {
  console.log(usage + '\n');
  const help = spawn(process.execPath, ['--import', 'tsx', entry, '--help'], { stdio: 'inherit' });
  help.on('exit', (code) => process.exit(code ?? 0));
} else {
  const roleAt = rest.indexOf('--role');
  if (processes > 1 && roleAt >= 0 && rest[roleAt + 1] === 'writer') {
    console.error('--role writer runs exactly once on the web host: do not combine it with --processes > 1.');
    process.exit(2);
  }
  supervise(processes, rest);
}

function supervise(count: number, args: string[]) {
  const idAt = args.indexOf('--id');
  const tag = '[supervisor]';
  const slots: { child: ChildProcess | null; startedAt: number; deaths: number; done: boolean; timer: NodeJS.Timeout | null }[] = [];
  let stopping = false;
  let exitCode = 0;

  const argsFor = (n: number) => {
    if (idAt < 0 || count === 1) return args;
    const copy = [...args];
    copy[idAt + 1] = `${args[idAt + 1]}-${n + 1}`;
    return copy;
  };

  const finishIfAllDone = () => {
    if (slots.every((s) => s.done)) {
      console.log(`${tag} every worker has stopped`);
      process.exit(exitCode);
    }
  };

  const start = (n: number) => {
    const slot = slots[n];
    slot.timer = null;
    if (stopping) {
      slot.done = true;
      finishIfAllDone();
      return;
    }
    const child = spawn(process.execPath, ['--import', 'tsx', entry, ...argsFor(n)], { stdio: 'inherit', env: process.env });
    slot.child = child;
    slot.startedAt = Date.now();
    console.log(`${tag} worker ${n + 1} started (pid ${child.pid})`);
    child.on('exit', (code, signal) => {
      slot.child = null;
      if (stopping || code === 0 || code === 2) {
        if (code === 2) exitCode = 2;
        if (!stopping) console.log(`${tag} worker ${n + 1} (pid ${child.pid}) exited with ${code}; not restarted`);
        slot.done = true;
        finishIfAllDone();
        return;
      }
      slot.deaths = Date.now() - slot.startedAt >= STABLE_AFTER_MS ? 1 : slot.deaths + 1;
      const waitMs = restartDelayMs(slot.deaths);
      console.log(`${tag} worker ${n + 1} (pid ${child.pid}) died (${signal ?? `exit code ${code}`}); restarting in ${waitMs} ms`);
      slot.timer = setTimeout(() => start(n), waitMs);
    });
  };

  for (let n = 0; n < count; n++) slots.push({ child: null, startedAt: 0, deaths: 0, done: false, timer: null });
  for (let n = 0; n < count; n++) start(n);

  for (const signal of ['SIGTERM', 'SIGINT'] as const) {
    process.on(signal, () => {
      if (stopping) {
        // A second signal: do not wait for the chunks in hand.
        for (const s of slots) s.child?.kill('SIGKILL');
        return;
      }
      stopping = true;
      console.log(`${tag} ${signal}: stopping ${slots.filter((s) => s.child).length} worker(s) after their chunk in hand`);
      for (const s of slots) {
        if (s.timer) {
          clearTimeout(s.timer);
          s.timer = null;
          s.done = true;
        }
        if (s.child) s.child.kill('SIGTERM');
        else s.done = true;
      }
      finishIfAllDone();
    });
  }
}
