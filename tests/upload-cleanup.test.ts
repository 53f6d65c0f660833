// Partial upload files (written under a temporary name until complete) that a killed upload or a
// crash left behind are removed when the server or a worker starts: the server removes every one
// older than its own process, a worker those also idle for 15 minutes (the server may be receiving
// one). Real processes on a real migrated SQLite file and a real uploads folder.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { PARTIAL_PREFIX, removeLeftoverPartials } from '../src/server/intake/storage';

let dir: string;
let uploads: string;
beforeEach(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'starkiln-cleanup-'));
  uploads = path.join(dir, 'uploads', 'campaign-1');
  mkdirSync(uploads, { recursive: true });
});
afterEach(() => rmSync(dir, { recursive: true, force: true }));

/** A file in the campaign folder last written `agoMs` ago. */
function file(name: string, agoMs: number): string {
  const p = path.join(uploads, name);
  writeFileSync(p, 'id,V\nember-1,9.5\n');
  const t = (Date.now() - agoMs) / 1000;
  utimesSync(p, t, t);
  return p;
}

describe('removeLeftoverPartials', () => {
  it('removes partial files written before the given time, and nothing else', () => {
    const old = file(`${PARTIAL_PREFIX}aaaa`, 60_000);
    const fresh = file(`${PARTIAL_PREFIX}bbbb`, 0);
    const complete = file('cccc', 60 * 60_000);
    writeFileSync(path.join(dir, 'uploads', 'not-a-folder'), '');
    expect(removeLeftoverPartials(dir, Date.now() - 30_000)).toEqual([old]);
    expect([existsSync(old), existsSync(fresh), existsSync(complete)]).toEqual([false, true, true]);
  });

  it('a data folder without uploads is fine', () => {
    expect(removeLeftoverPartials(path.join(dir, 'nothing-here'), Date.now())).toEqual([]);
  });
});

describe('at start-up', () => {
  const env = () => ({ ...process.env, DATABASE_PATH: path.join(dir, 'starkiln.db'), DATA_DIR: '', BETTER_AUTH_SECRET: 'cleanup-test-secret-cleanup-test-secret-0123' });

  it('the server (its first getApp) removes every partial file older than the process', () => {
    // Written 2 s before the process starts: a leftover of the previous server.
    const leftover = file(`${PARTIAL_PREFIX}left`, 2000);
    const complete = file('kept', 2000);
    const r = spawnSync(process.execPath, ['--import', 'tsx', '-e', "const { getApp } = await import('./src/app/app.ts'); getApp(); process.exit(0);"], {
      cwd: projectRoot(),
      env: env(),
      encoding: 'utf8',
      timeout: 120_000,
    });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/Removed 1 partial upload file\(s\) left by an upload that never finished/);
    expect(existsSync(leftover)).toBe(false);
    expect(existsSync(complete)).toBe(true);
  });

  it('a worker (npm run worker, one process with --drain) removes those idle for 15 minutes, not one still arriving', () => {
    const leftover = file(`${PARTIAL_PREFIX}left`, 20 * 60_000);
    const arriving = file(`${PARTIAL_PREFIX}busy`, 5000);
    const r = spawnSync(process.execPath, ['--import', 'tsx', path.join(projectRoot(), 'workers/index.ts'), '--drain', '--quiet'], {
      cwd: projectRoot(),
      env: env(),
      encoding: 'utf8',
      timeout: 120_000,
    });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/Removed 1 partial upload file/);
    expect(existsSync(leftover)).toBe(false);
    expect(existsSync(arriving)).toBe(true);
  });
});
