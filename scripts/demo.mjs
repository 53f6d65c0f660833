// `npm run demo`: build if needed, migrate, seed the invented demo scenario (idempotent) and serve
// on 127.0.0.1:4321. Passwords of the demo accounts: README.md and .env.example.
import { ensureBuilt, prepareEnv, runTs, startServer } from './start.mjs';

prepareEnv();
ensureBuilt({ buildIfMissing: true });
runTs('src/db/migrate-cli.ts', 'Migration');
runTs('src/db/seed.ts', 'Seeding the demo');
startServer();
