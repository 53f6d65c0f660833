// A DATABASE_PATH written only in `.env` reaches every command: `npm run db:migrate`, `npm run
// db:seed` and `npm run worker` are run for real, each in a project folder whose `.env` names a
// database elsewhere, with DATABASE_PATH absent from the environment. The file at that path must be
// the one created and written, and the default data/starkiln.db must never appear.
// The project folder is a temp dir of links to this checkout (STARKILN_ROOT points at it, so `.env`
// is read from there, as it is read from the project root in normal use).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';

let dir: string;
let dbFile: string;
let env: NodeJS.ProcessEnv;

function run(args: string[]) {
  const r = spawnSync('npm', ['run', '--silent', ...args], { cwd: dir, env, encoding: 'utf8', timeout: 300_000 });
  return { status: r.status, out: `${r.stdout}${r.stderr}` };
}

beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-dotenv-'));
  const root = projectRoot();
  for (const name of ['package.json', 'drizzle', 'src', 'workers', 'node_modules', 'tsconfig.json']) symlinkSync(path.join(root, name), path.join(dir, name));
  mkdirSync(path.join(dir, 'elsewhere'));
  dbFile = path.join(dir, 'elsewhere', 'from-dotenv.db');
  writeFileSync(path.join(dir, '.env'), `# only here\nDATABASE_PATH=elsewhere/from-dotenv.db\nBETTER_AUTH_SECRET=${'d'.repeat(40)}\n`);
  env = { ...process.env, STARKILN_ROOT: dir };
  for (const k of ['DATABASE_PATH', 'DATA_DIR', 'BETTER_AUTH_SECRET', 'STARKILN_QUEUE', 'WORKER_PROCESSES']) delete env[k];
});

afterAll(() => rmSync(dir, { recursive: true, force: true }));

const defaultFile = () => path.join(dir, 'data', 'starkiln.db');

describe('DATABASE_PATH from .env', () => {
  it('npm run db:migrate migrates the database .env names', () => {
    const r = run(['db:migrate']);
    expect(r.status, r.out).toBe(0);
    expect(r.out).toContain(`db:migrate: ${dbFile} is at migration`);
    const sqlite = new Database(dbFile, { readonly: true });
    const applied = (sqlite.prepare('SELECT count(*) AS n FROM __drizzle_migrations').get() as { n: number }).n;
    sqlite.close();
    expect(applied).toBeGreaterThan(0);
    expect(existsSync(defaultFile())).toBe(false);
  });

  it('npm run db:seed writes the demo into that database', () => {
    const r = run(['db:seed']);
    expect(r.status, r.out).toBe(0);
    const sqlite = new Database(dbFile, { readonly: true });
    const names = sqlite.prepare('SELECT name FROM campaigns').pluck().all();
    sqlite.close();
    expect(names).toContain('Lanternfield Survey — cool dwarfs, season one');
    expect(existsSync(defaultFile())).toBe(false);
  }, 300_000);

  it('npm run worker opens that database (a fresh file is created and migrated there)', () => {
    rmSync(dbFile);
    for (const suffix of ['-wal', '-shm']) rmSync(dbFile + suffix, { force: true });
    const r = run(['worker', '--', '--drain', '--quiet']);
    expect(r.status, r.out).toBe(0);
    expect(r.out).toContain(`worker started on ${dbFile}`);
    expect(existsSync(dbFile)).toBe(true);
    const sqlite = new Database(dbFile, { readonly: true });
    const tables = sqlite.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name = 'jobs'").pluck().all();
    sqlite.close();
    expect(tables).toEqual(['jobs']);
    expect(existsSync(defaultFile())).toBe(false);
  }, 120_000);
});
