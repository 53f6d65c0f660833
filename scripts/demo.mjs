// `npm run demo`: build if needed, migrate, seed the invented demo scenario (idempotent) and serve
// on 127.0.0.1:4321. Passwords of the demo accounts: README.md and .env.example.
import { spawn } from 'node:child_process';
import path from 'node:path';
import { ensureBuilt, prepareEnv, root, runTs, startServer } from './start.mjs';

prepareEnv();
ensureBuilt({ buildIfMissing: true });
runTs('src/app/migrate-cli.ts', 'Migration');
runTs('src/seed/seed.ts', 'Seeding the demo');
startServer();

// One worker next to the server drains the batch queue (the same DATABASE_PATH); it stops with us.
const worker = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts')], { cwd: root, stdio: 'inherit', env: process.env });
for (const signal of ['SIGINT', 'SIGTERM']) process.on(signal, () => worker.kill(signal));
process.on('exit', () => {
  if (worker.exitCode === null) worker.kill('SIGTERM');
});
