// The worker loop on a database another connection keeps locked for longer than the worker's busy
// timeout: claim() and complete get SQLITE_BUSY, the worker logs it, backs off and goes on, and the
// batch is finished once the lock is gone. Before, the first SQLITE_BUSY ended the worker for good.
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../src/db/client';
import { createApp } from '../src/app/app';
import { startBatch } from '../src/server/batches';
import { databaseBackoffMs, isBusy, isDatabaseError } from '../src/server/sqlite-errors';
import { createWorker } from '../workers/runner';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
afterEach(() => {
  for (const a of apps.splice(0)) a.cleanup();
});

describe('a worker on a busy database', () => {
  it('backs off on SQLITE_BUSY and finishes the batch once the lock is released', async () => {
    const t = createTestApp({ FIT_CHUNK_STARS: '10' });
    apps.push(t);
    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    insertMockStars(t.db, { campaignId: campaign.id, count: 60 });
    const batch = startBatch(t.app, analyst, campaign.id, {});

    // The worker's own connection, with a busy timeout far shorter than the lock is held.
    const own = openDatabase(t.filePath);
    own.sqlite.pragma('busy_timeout = 20');
    const lines: string[] = [];
    const worker = createWorker(createApp(own.db, t.app.env), { owner: 'patient', idleMs: 5, drain: true, databaseBackoffMs: 20, log: (l) => lines.push(l) });

    // Another connection (the test's) holds the write lock, as a long import does.
    t.sqlite.exec('BEGIN IMMEDIATE');
    const running = worker.run();
    while (!lines.some((l) => /database error \(SQLITE_BUSY/.test(l))) await new Promise((r) => setTimeout(r, 10));
    // Several errors in a row, each waited out, and the worker still running.
    while (lines.filter((l) => /database error/.test(l)).length < 3) await new Promise((r) => setTimeout(r, 10));
    expect(worker.stopping).toBe(false);
    t.sqlite.exec('COMMIT');

    await running;
    own.sqlite.close();
    expect(t.sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ?').pluck().get(batch.id)).toBe(60);
    expect(t.sqlite.prepare('SELECT status FROM batches WHERE id = ?').pluck().get(batch.id)).toBe('finished');
    expect(lines.find((l) => /database error/.test(l))).toMatch(/\[patient\] database error \(SQLITE_BUSY: database is locked\); retrying in \d+ ms \(1 in a row\)/);
  });

  it('the backoff doubles per error in a row, with jitter, up to 30 s', () => {
    expect([1, 2, 3, 4].map((n) => databaseBackoffMs(n, 200, () => 0.5))).toEqual([200, 400, 800, 1600]);
    expect(databaseBackoffMs(30, 200, () => 0.5)).toBe(30_000);
    expect(databaseBackoffMs(1, 200, () => 0)).toBe(150);
    expect(databaseBackoffMs(1, 200, () => 1)).toBe(250);
    expect(isBusy({ code: 'SQLITE_BUSY_SNAPSHOT' })).toBe(true);
    expect(isDatabaseError({ code: 'SQLITE_IOERR' })).toBe(true);
    expect(isDatabaseError(new Error('plain'))).toBe(false);
  });
});
