// A fresh migrated SQLite with an analyst, a campaign and an upload folder beside the database, for
// tests that bring files in through the intake as the web app does (upload → read → import, with
// the intake jobs drained in this process).
import path from 'node:path';
import { afterEach, beforeEach } from 'vitest';
import type { ImportSummary } from '../../src/contracts/intake';
import type { Actor } from '../../src/server/context';
import { createUpload, getUpload, importUpload, type UploadDetail } from '../../src/server/intake/intake';
import { outcomeOf } from '../../src/server/intake/jobs';
import { drainIntakeJobs } from '../../src/server/intake/run';
import type { IntakeConfig } from '../../src/server/intake/storage';
import { makeCampaign, makeUser } from '../../src/seed/factories';
import { createTestApp, type TestApp } from '../setup/db';

export interface IntakeCampaign {
  t: TestApp;
  analyst: Actor;
  campaignId: string;
  config: IntakeConfig;
}

/** Registers beforeEach/afterEach; the returned object's fields are set before each test. */
export function useIntakeCampaign(): IntakeCampaign {
  const c = {} as IntakeCampaign;
  beforeEach(async () => {
    c.t = createTestApp();
    c.analyst = await makeUser(c.t.app);
    c.campaignId = makeCampaign(c.t.app, c.analyst).id;
    c.config = { dataDir: path.dirname(c.t.filePath), maxBytes: 5 * 1024 * 1024 };
  });
  afterEach(() => c.t.cleanup());
  return c;
}

/** Uploads `text` as file `name` and imports it with the detected mapping and rules. */
export async function importText(c: IntakeCampaign, name: string, text: string, options: { source?: string } = {}): Promise<{ detail: UploadDetail; summary: ImportSummary }> {
  const form = new FormData();
  form.append('file', new Blob([text]), name);
  const u = await createUpload(c.t.app, c.analyst, c.campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), c.config);
  await drainIntakeJobs(c.t.db);
  outcomeOf(c.t.db, u.job!.id);
  const d = getUpload(c.t.db, c.campaignId, u.id);
  const job = importUpload(c.t.app, c.analyst, c.campaignId, u.id, { ...options, mapping: { layout: d.detected!.layout, columns: d.detected!.columns }, rules: d.detected!.rules });
  await drainIntakeJobs(c.t.db);
  const summary = outcomeOf(c.t.db, job.id).import as ImportSummary;
  return { detail: getUpload(c.t.db, c.campaignId, u.id), summary };
}
