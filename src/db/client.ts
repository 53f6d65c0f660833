// One SQLite file shared by the web server and the worker process. WAL lets readers run while one
// writer commits; busy_timeout makes a second writer wait instead of failing with SQLITE_BUSY.
import Database from 'better-sqlite3';
import { drizzle, type BetterSQLite3Database } from 'drizzle-orm/better-sqlite3';
import { mkdirSync } from 'node:fs';
import path from 'node:path';
import * as schema from './schema';
import { migrateDatabase } from './migrate';

export type AppDatabase = BetterSQLite3Database<typeof schema> & { $client: Database.Database };
/** What a transaction callback receives; use it exactly like the database. */
export type AppTransaction = Parameters<Parameters<AppDatabase['transaction']>[0]>[0];
export type DbOrTx = AppDatabase | AppTransaction;

export interface OpenedDatabase {
  sqlite: Database.Database;
  db: AppDatabase;
}

export function openDatabase(filePath: string): OpenedDatabase {
  if (filePath !== ':memory:') mkdirSync(path.dirname(filePath), { recursive: true });
  const sqlite = new Database(filePath);
  sqlite.pragma('journal_mode = WAL');
  sqlite.pragma('foreign_keys = ON');
  sqlite.pragma('busy_timeout = 5000');
  // NORMAL is durable across application crashes in WAL mode; only a power cut can lose the last commit.
  sqlite.pragma('synchronous = NORMAL');
  const db = drizzle(sqlite, { schema }) as AppDatabase;
  return { sqlite, db };
}

let appDatabase: OpenedDatabase | undefined;

/**
 * The process-wide database at `databasePath` (the settings' DATABASE_PATH, src/adapters/env.ts),
 * opened and migrated on first use so a freshly started server is always on the latest schema.
 */
export function getDb(databasePath: string): AppDatabase {
  if (!appDatabase) {
    const opened = openDatabase(databasePath);
    migrateDatabase(opened.db);
    appDatabase = opened;
  }
  return appDatabase.db;
}

/** Close the process-wide database (worker shutdown, scripts). */
export function closeDb(): void {
  appDatabase?.sqlite.close();
  appDatabase = undefined;
}
