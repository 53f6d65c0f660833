import type { BetterSQLite3Database } from 'drizzle-orm/better-sqlite3';
import { migrate } from 'drizzle-orm/better-sqlite3/migrator';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { migrationsFolder } from './paths';

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type AnyDb = BetterSQLite3Database<any>;

/** Apply every migration under drizzle/ that the database has not seen yet. Safe to call repeatedly. */
export function migrateDatabase(db: AnyDb, folder: string = migrationsFolder()): void {
  migrate(db, { migrationsFolder: folder });
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
