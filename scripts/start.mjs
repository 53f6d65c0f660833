// `npm start`: migrate the database, then run the built server (scripts/server.mjs in front of
// dist/server/entry.mjs).
// Also the building blocks of scripts/demo.mjs.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

export const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

/** Read .env (values already in the environment win) and fill in the served address. */
export function prepareEnv() {
  const dotenv = path.join(root, '.env');
  if (existsSync(dotenv)) process.loadEnvFile(dotenv);
  process.env.HOST ??= '127.0.0.1';
  process.env.PORT ??= '4321';
  process.env.BETTER_AUTH_URL ??= `http://${process.env.HOST}:${process.env.PORT}`;
}

/** Run a TypeScript entry point of ours to completion (through tsx), or exit with its status. */
export function runTs(file, label) {
  const r = spawnSync(process.execPath, ['--import', 'tsx', path.join(root, file)], { cwd: root, stdio: 'inherit', env: process.env });
  if (r.status !== 0) {
    console.error(`${label} failed (exit ${r.status ?? r.signal}).`);
    process.exit(r.status ?? 1);
  }
}

export function ensureBuilt({ buildIfMissing }) {
  if (existsSync(path.join(root, 'dist/server/entry.mjs'))) return;
  if (!buildIfMissing) {
    console.error('No build found: run `npm run build` first.');
    process.exit(1);
  }
  console.log('Building the app (first run only)…');
  const r = spawnSync(process.execPath, [path.join(root, 'node_modules/astro/astro.js'), 'build'], { cwd: root, stdio: 'inherit' });
  if (r.status !== 0) process.exit(r.status ?? 1);
}

/** Start the web server; children stop when this process is asked to stop. */
export function startServer() {
  const server = spawn(process.execPath, [path.join(root, 'scripts/server.mjs')], { cwd: root, stdio: 'inherit', env: process.env });
  const children = [server];
  // Later: the worker process starts here too (`npm run worker`), sharing the same DATABASE_PATH.
  for (const signal of ['SIGINT', 'SIGTERM']) {
    process.on(signal, () => {
      for (const child of children) child.kill(signal);
    });
  }
  server.on('exit', (code, signal) => process.exit(code ?? (signal ? 0 : 1)));
  console.log(`Starkiln is serving on ${process.env.BETTER_AUTH_URL}`);
  return server;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  prepareEnv();
  ensureBuilt({ buildIfMissing: false });
  runTs('src/app/migrate-cli.ts', 'Migration');
  startServer();
}
