// The database layer: pragmas for sharing one file between processes, repeatable migrations,
// constraints that hold whatever code writes, and the demo seed.
import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../src/db/client';
import { migrateDatabase, migrationStatus } from '../src/db/migrate';
import { projectRoot } from '../src/db/paths';
import { DEMO_DEFAULT_PASSWORDS, seedDemo } from '../src/seed/seed';
import { campaigns, outboxMessages, user } from '../src/db/schema';
import { listCampaignsForUser } from '../src/server/campaigns';
import { checkHealth } from '../src/server/health';
import { createTestApp, createTestDatabase, type TestDatabase } from './setup/db';

let t: TestDatabase | undefined;
afterEach(() => t?.cleanup());

describe('openDatabase', () => {
  it('sets WAL, foreign keys, busy timeout and synchronous=NORMAL', () => {
    t = createTestDatabase();
    expect(t.sqlite.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(t.sqlite.pragma('foreign_keys', { simple: true })).toBe(1);
    expect(t.sqlite.pragma('busy_timeout', { simple: true })).toBe(5000);
    expect(t.sqlite.pragma('synchronous', { simple: true })).toBe(1);
  });

  it('lets a second connection (another process, in production) read what the first committed', () => {
    t = createTestDatabase();
    const other = openDatabase(t.filePath);
    try {
      t.sqlite.prepare("insert into user (id, name, email) values ('u1', 'One', 'one@example.test')").run();
      expect(other.db.select().from(user).all().map((u) => u.email)).toEqual(['one@example.test']);
    } finally {
      other.sqlite.close();
    }
  });

  it('enforces foreign keys and the role vocabulary in the database itself', () => {
    t = createTestDatabase();
    expect(() => t!.sqlite.prepare("insert into campaigns (id, name, name_key, created_by_id) values ('c', 'C', 'c', 'nobody')").run()).toThrow(/FOREIGN KEY/);
    t.sqlite.prepare("insert into user (id, name, email) values ('u1', 'One', 'one@example.test')").run();
    t.sqlite.prepare("insert into campaigns (id, name, name_key, created_by_id) values ('c', 'C', 'c', 'u1')").run();
    t.sqlite.prepare("insert into campaign_members (campaign_id, user_id) values ('c', 'u1')").run();
    expect(() => t!.sqlite.prepare("insert into campaign_member_roles (campaign_id, user_id, role) values ('c', 'u1', 'owner')").run()).toThrow(/CHECK/);
    expect(() => t!.sqlite.prepare("update user set kind = 'superuser'").run()).toThrow(/CHECK/);
  });
});

describe('migrations', () => {
  it('are repeatable and reported as complete', () => {
    t = createTestDatabase();
    migrateDatabase(t.db);
    const status = migrationStatus(t.db);
    expect(status.expected).toBeGreaterThanOrEqual(1);
    expect(status.applied).toBe(status.expected);
    const health = checkHealth(() => t!.db);
    expect(health).toMatchObject({ status: 'ok', database: { reachable: true, migrated: true } });
    expect(health.version).toBe(JSON.parse(readFileSync(path.join(projectRoot(), 'package.json'), 'utf8')).version);
  });

  // drizzle's own migrator decides what to apply before taking the write lock; the window for two
  // processes to both apply a migration is narrow, so this guards the behaviour rather than
  // reproducing that race on every run.
  it('can run from several processes at once on a fresh file (server and workers start together)', async () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-migrate-'));
    const file = path.join(dir, 'race.db');
    try {
      const at = String(Date.now() + 4000);
      const runs = Array.from({ length: 4 }, () =>
        new Promise<{ code: number | null; out: string }>((resolve) => {
          const child = spawn(process.execPath, ['--import', 'tsx', path.join(projectRoot(), 'tests/support/migrate-at.ts'), file, at], { cwd: projectRoot() });
          let out = '';
          child.stdout.on('data', (d) => (out += d));
          child.stderr.on('data', (d) => (out += d));
          child.on('close', (code) => resolve({ code, out }));
        }),
      );
      const results = await Promise.all(runs);
      for (const r of results) expect(r, r.out).toMatchObject({ code: 0 });
      const check = openDatabase(file);
      try {
        const status = migrationStatus(check.db);
        expect(status.applied).toBe(status.expected);
        const rows = check.sqlite.prepare('select count(*) as n from __drizzle_migrations').get() as { n: number };
        expect(rows.n).toBe(status.expected);
      } finally {
        check.sqlite.close();
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('health says so when the database is not migrated', () => {
    const bare = openDatabase(':memory:');
    try {
      expect(checkHealth(() => bare.db)).toMatchObject({ status: 'degraded', database: { reachable: true, migrated: false, appliedMigrations: 0 } });
    } finally {
      bare.sqlite.close();
    }
  });
});

describe('demo seed', () => {
  it('creates one campaign with one person per role, and is idempotent', async () => {
    const s = createTestApp();
    t = s;
    const first = await seedDemo(s.app);
    const second = await seedDemo(s.app);
    expect(first.created).toBe(true);
    expect(second).toEqual({ campaignId: first.campaignId, created: false });
    expect(s.db.select().from(campaigns).all()).toHaveLength(1);
    const kinds = Object.fromEntries(s.db.select().from(user).all().map((u) => [u.email.split('@')[0], u.kind]));
    expect(kinds).toEqual({ admin: 'admin', analyst: 'member', reviewer: 'member', collaborator: 'guest' });
    const analyst = s.db.select().from(user).all().find((u) => u.email.startsWith('analyst@'))!;
    expect(listCampaignsForUser(s.db, analyst.id)[0].myRoles).toEqual(['analyst']);
    expect(s.db.select().from(outboxMessages).all().map((m) => m.kind)).toEqual(['invitation']);
  });

  it('uses the demo passwords written in .env.example', () => {
    const example = readFileSync(path.join(projectRoot(), '.env.example'), 'utf8');
    for (const [role, password] of Object.entries(DEMO_DEFAULT_PASSWORDS)) {
      expect(example).toContain(`DEMO_${role.toUpperCase()}_PASSWORD=${password}\n`);
    }
  });
});
