// A real SQLite file per test, migrated with the committed migrations. Never a mock.
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { openDatabase, type AppDatabase } from '../../src/db/client';
import { migrateDatabase } from '../../src/db/migrate';
import type Database from 'better-sqlite3';
import { createApp } from '../../src/app/app';
import { parseEnv } from '../../src/adapters/env';
import type { AppServices } from '../../src/server/context';

export interface TestDatabase {
  db: AppDatabase;
  sqlite: Database.Database;
  filePath: string;
  cleanup: () => void;
}

export function createTestDatabase(): TestDatabase {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-test-'));
  const filePath = path.join(dir, 'test.db');
  const { db, sqlite } = openDatabase(filePath);
  migrateDatabase(db);
  return {
    db,
    sqlite,
    filePath,
    cleanup: () => {
      if (sqlite.open) sqlite.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export interface TestApp extends TestDatabase {
  app: AppServices;
}

/** A migrated database plus the app services (auth, outbox mailer) wired to it. */
export function createTestApp(overrides: Record<string, string> = {}): TestApp {
  const t = createTestDatabase();
  const env = parseEnv({
    DATABASE_PATH: t.filePath,
    BETTER_AUTH_SECRET: 'test-secret-test-secret-test-secret-0123456789',
    BETTER_AUTH_URL: 'http://127.0.0.1:4321',
    MAIL_TRANSPORT: 'outbox',
    AUTH_RATE_LIMIT: 'off',
    ...overrides,
  });
  return { ...t, app: createApp(t.db, env) };
}
