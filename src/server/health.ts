import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { AppDatabase } from '../db/client';
import { migrationStatus } from '../db/migrate';
import { projectRoot } from '../db/paths';
import type { HealthReport } from '../contracts/api';

let version: string | undefined;

export function appVersion(): string {
  version ??= (JSON.parse(readFileSync(path.join(projectRoot(), 'package.json'), 'utf8')) as { version: string }).version;
  return version;
}

export function checkHealth(openDb: () => AppDatabase): HealthReport {
  try {
    const db = openDb();
    db.$client.prepare('select 1').get();
    const status = migrationStatus(db);
    const migrated = status.applied === status.expected;
    return {
      status: migrated ? 'ok' : 'degraded',
      version: appVersion(),
      database: { reachable: true, migrated, appliedMigrations: status.applied, expectedMigrations: status.expected },
    };
  } catch (err) {
    return {
      status: 'degraded',
      version: appVersion(),
      database: { reachable: false, migrated: false, appliedMigrations: 0, expectedMigrations: 0, error: err instanceof Error ? err.message : String(err) },
    };
  }
}
