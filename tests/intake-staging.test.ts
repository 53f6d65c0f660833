// The staging files of checks (<upload>.check.sqlite beside the upload) on a real migrated SQLite
// and a real uploads folder: a withdrawn upload takes its staging file with it, a withdrawal waits
// for a job still reading the upload, and the start-up clean-up keeps the staging files of uploads
// whose stored check holds them while it removes the others. Star names are invented.
import { existsSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { Actor } from '../src/server/context';
import { HttpError } from '../src/server/errors';
import { createUpload, getUpload, importUpload, type UploadDetail } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { removeOrphanStaging, stagingPathFor } from '../src/server/intake/staging';
import type { IntakeConfig } from '../src/server/intake/storage';
import { withdrawUpload } from '../src/server/intake/withdraw';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;
let config: IntakeConfig;
let dataDir: string;

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
  dataDir = path.dirname(t.filePath);
  config = { dataDir, maxBytes: 5 * 1024 * 1024 };
});
afterEach(() => t.cleanup());

const CSV = 'id,V,V_err,Ks,Ks_err\nember-1,9.5,0.02,7.9,0.03\nember-2,10.1,0.02,8.4,0.03\n';

function send(name: string, text: string): Promise<UploadDetail> {
  const form = new FormData();
  form.append('file', new Blob([text]), name);
  return createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), config);
}

async function uploaded(name: string, text = CSV): Promise<UploadDetail & { storedPath: string }> {
  const u = await send(name, text);
  await drainIntakeJobs(t.db);
  outcomeOf(t.db, u.job!.id);
  const storedPath = t.sqlite.prepare('SELECT stored_path FROM uploads WHERE id = ?').pluck().get(u.id) as string;
  return { ...getUpload(t.db, campaignId, u.id), storedPath };
}

describe('withdrawing an upload with a staged check', () => {
  it('removes the staging file with the upload', async () => {
    const u = await uploaded('stars.csv');
    // The reading job checks the detected mapping and stages its stars.
    expect(existsSync(stagingPathFor(u.storedPath))).toBe(true);
    withdrawUpload(t.db, analyst, campaignId, u.id);
    expect(existsSync(u.storedPath)).toBe(false);
    expect(existsSync(stagingPathFor(u.storedPath))).toBe(false);
  });

  it('waits for a job still working on the upload: 409, nothing removed', async () => {
    const u = await uploaded('stars.csv');
    importUpload(t.app, analyst, campaignId, u.id, { mapping: { layout: u.detected!.layout, columns: u.detected!.columns }, rules: u.detected!.rules });
    let refused: unknown;
    try {
      withdrawUpload(t.db, analyst, campaignId, u.id);
    } catch (err) {
      refused = err;
    }
    expect(refused).toBeInstanceOf(HttpError);
    expect((refused as HttpError).status).toBe(409);
    expect((refused as HttpError).message).toBe('stars.csv is being imported; withdraw it once that has finished.');
    expect(existsSync(u.storedPath)).toBe(true);
    await drainIntakeJobs(t.db);
    const w = withdrawUpload(t.db, analyst, campaignId, u.id);
    expect(w).toMatchObject({ measurementsRemoved: 4, starsRemoved: 2 });
  });
});

describe('removeOrphanStaging (the server at start-up)', () => {
  it('keeps the staging file of a stored check; removes those of gone uploads and of checks that no longer hold', async () => {
    const live = await uploaded('live.csv');
    const imported = await uploaded('imported.csv', CSV.replace(/ember/g, 'cinder'));
    const stale = await uploaded('stale.csv', CSV.replace(/ember/g, 'ash'));
    importUpload(t.app, analyst, campaignId, imported.id, { mapping: { layout: imported.detected!.layout, columns: imported.detected!.columns }, rules: imported.detected!.rules });
    await drainIntakeJobs(t.db);
    // The import used the staged stars and removed their file.
    expect(existsSync(stagingPathFor(imported.storedPath))).toBe(false);
    writeFileSync(stagingPathFor(imported.storedPath), 'left by a stopped process');
    // A check cut short: its stored check was marked as no longer staged before the file was rebuilt.
    t.sqlite.prepare("UPDATE uploads SET last_check = json_set(last_check, '$.staged', json('false')) WHERE id = ?").run(stale.id);
    const gone = path.join(path.dirname(live.storedPath), 'no-such-upload.check.sqlite');
    writeFileSync(gone, 'x');
    writeFileSync(`${gone}-journal`, 'x');

    const removed = removeOrphanStaging(t.db, dataDir).sort();
    expect(removed).toEqual([stagingPathFor(imported.storedPath), stagingPathFor(stale.storedPath), gone, `${gone}-journal`].sort());
    expect(existsSync(stagingPathFor(live.storedPath))).toBe(true);
    expect(existsSync(live.storedPath)).toBe(true);

    // The kept staging file still serves the import of the checked mapping.
    importUpload(t.app, analyst, campaignId, live.id, { mapping: { layout: live.detected!.layout, columns: live.detected!.columns }, rules: live.detected!.rules });
    await drainIntakeJobs(t.db);
    expect(t.sqlite.prepare("SELECT count(*) FROM stars WHERE star_key LIKE 'ember-%'").pluck().get()).toBe(2);
  });
});
