import type { BetterSQLite3Database } from 'drizzle-orm/better-sqlite3';
import { readMigrationFiles } from 'drizzle-orm/migrator';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { migrationsFolder } from './paths';

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type AnyDb = BetterSQLite3Database<any>;

/**
 * Apply every migration under drizzle/ that the database has not seen yet. Safe to call repeatedly,
 * and from several processes at once (web server and workers all migrate at start-up): unlike
 * drizzle's own migrator, which reads the last applied migration before taking the write lock, this
 * takes the lock first (BEGIN IMMEDIATE) and decides inside it. Same bookkeeping table as drizzle's.
 */
export function migrateDatabase(db: AnyDb, folder: string = migrationsFolder()): void {
  const sqlite = (db as unknown as { $client: import('better-sqlite3').Database }).$client;
  const migrations = readMigrationFiles({ migrationsFolder: folder });
  sqlite.exec(
    'CREATE TABLE IF NOT EXISTS __drizzle_migrations (id SERIAL PRIMARY KEY, hash text NOT NULL, created_at numeric)',
  );
  const apply = sqlite.transaction(() => {
    const last = sqlite.prepare('SELECT created_at AS createdAt FROM __drizzle_migrations ORDER BY created_at DESC LIMIT 1').get() as
      | { createdAt: number }
      | undefined;
    const insert = sqlite.prepare('INSERT INTO __drizzle_migrations (hash, created_at) VALUES (?, ?)');
    for (const migration of migrations) {
      if (last && Number(last.createdAt) >= migration.folderMillis) continue;
      for (const statement of migration.sql) if (statement.trim()) sqlite.exec(statement);
      insert.run(migration.hash, migration.folderMillis);
    }
  });
  apply.immediate();
}

interface Journal {
  entries: { tag: string; when: number }[];
}

/** How many migrations the code ships and how many the database has applied (for /api/health). */
export function migrationStatus(db: AnyDb, folder: string = migrationsFolder()): { expected: number; applied: number } {
  const journal = JSON.parse(readFileSync(path.join(folder, 'meta', '_journal.json'), 'utf8')) as Journal;
  const sqlite = (db as unknown as { $client: import('better-sqlite3').Database }).$client;
  const table = sqlite
    .prepare("select name from sqlite_master where type = 'table' and name = '__drizzle_migrations'")
    .get();
  if (!table) return { expected: journal.entries.length, applied: 0 };
  const latest = journal.entries.map((e) => e.when);
  const applied = sqlite.prepare('select created_at as createdAt from __drizzle_migrations').all() as { createdAt: number }[];
  const appliedSet = new Set(applied.map((r) => Number(r.createdAt)));
  return { expected: latest.length, applied: latest.filter((w) => appliedSet.has(w)).length };
}
