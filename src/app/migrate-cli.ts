// `npm run db:migrate`: bring the database at DATABASE_PATH (default data/starkiln.db) up to date.
// The settings (and `.env`) are read first, as the server and the workers read them.
import { getEnv } from '../adapters/env';
import { openDatabase } from '../db/client';
import { migrateDatabase, migrationStatus } from '../db/migrate';

const file = getEnv().databasePath;
const { db, sqlite } = openDatabase(file);
try {
  migrateDatabase(db);
  const status = migrationStatus(db);
  console.log(`db:migrate: ${file} is at migration ${status.applied} of ${status.expected}`);
} finally {
  sqlite.close();
}
