// `npm run db:migrate`: bring the database at DATABASE_PATH (default data/starkiln.db) up to date.
import { openDatabase } from './client';
import { migrateDatabase, migrationStatus } from './migrate';
import { resolveDatabasePath } from './paths';

const file = resolveDatabasePath();
const { db, sqlite } = openDatabase(file);
try {
  migrateDatabase(db);
  const status = migrationStatus(db);
  console.log(`db:migrate: ${file} is at migration ${status.applied} of ${status.expected}`);
} finally {
  sqlite.close();
}
