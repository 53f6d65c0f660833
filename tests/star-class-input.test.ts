// A star's own luminosity class and [Fe/H] (input columns lum_class and feh) on a real migrated
// SQLite: an upload with them stores them on the star, a batch fit uses the class as given (not
// the batch's choice) and records [Fe/H], raising feh_far far from solar; a re-upload without the
// columns keeps what the star had. Star names are invented; the magnitudes are rough values of a
// Sun-like dwarf at 20 pc (M_V ≈ 4.8, from memory; only the bookkeeping is checked here).
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { Actor } from '../src/server/context';
import { checkUpload, createUpload, getUpload, importUpload, type CheckSummary, type UploadDetail } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import type { IntakeConfig } from '../src/server/intake/storage';
import { fitAndDrain } from '../src/seed/review-stars';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;
let config: IntakeConfig;

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
  config = { dataDir: path.dirname(t.filePath), maxBytes: 5 * 1024 * 1024 };
});
afterEach(() => t.cleanup());

const PHOT = '6.34,0.02,6.18,0.003,6.51,0.003,5.69,0.004,5.20,0.02,4.88,0.02,4.83,0.02,50,0.05';
const HEAD = 'V,V_err,G,G_err,BP,BP_err,RP,RP_err,J,J_err,H,H_err,Ks,Ks_err,parallax_mas,parallax_err_mas';

async function importText(name: string, text: string): Promise<UploadDetail> {
  const form = new FormData();
  form.append('file', new Blob([text]), name);
  const u = await createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), config);
  await drainIntakeJobs(t.db);
  outcomeOf(t.db, u.job!.id);
  const d = getUpload(t.db, campaignId, u.id);
  const job = importUpload(t.app, analyst, campaignId, u.id, { mapping: { layout: d.detected!.layout, columns: d.detected!.columns }, rules: d.detected!.rules });
  await drainIntakeJobs(t.db);
  outcomeOf(t.db, job.id);
  return getUpload(t.db, campaignId, u.id);
}

describe('lum_class and feh input columns', () => {
  it('are stored on the star and used by the fit: the class as given, [Fe/H] recorded, feh_far far from solar', async () => {
    await importText('season.csv', `id,lum_class,feh,${HEAD}\nBrackmere,giant,-2.1,${PHOT}\nFennlow,dwarf,0.05,${PHOT}\nGildstead,,,${PHOT}\n`);
    const stars = t.sqlite.prepare('SELECT star_key AS k, lum_class AS c, feh_dex AS f FROM stars WHERE campaign_id = ? ORDER BY star_key').all(campaignId);
    expect(stars).toEqual([
      { k: 'Brackmere', c: 'giant', f: -2.1 },
      { k: 'Fennlow', c: 'dwarf', f: 0.05 },
      { k: 'Gildstead', c: null, f: null },
    ]);
    // The batch says dwarf for everyone; a star's own class wins over it.
    const batchId = await fitAndDrain(t.app, analyst, campaignId, { lumClass: 'dwarf' });
    const fits = t.sqlite
      .prepare('SELECT s.star_key AS k, r.lum_class AS c, r.lum_class_source AS src, r.feh_dex AS f, r.flags FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? ORDER BY s.star_key')
      .all(batchId) as { k: string; c: string; src: string; f: number | null; flags: string }[];
    expect(fits.map(({ k, c, src, f }) => ({ k, c, src, f }))).toEqual([
      { k: 'Brackmere', c: 'giant', src: 'input', f: -2.1 },
      { k: 'Fennlow', c: 'dwarf', src: 'input', f: 0.05 },
      { k: 'Gildstead', c: 'dwarf', src: 'batch', f: null },
    ]);
    const flagsOf = (k: string) => fits.find((x) => x.k === k)!.flags.split(' ');
    expect(flagsOf('Brackmere')).toContain('feh_far');
    expect(flagsOf('Fennlow')).not.toContain('feh_far');
  });

  it('a re-upload without the columns keeps the class and [Fe/H] the star had; a bad class word is refused by row and column', async () => {
    await importText('first.csv', `id,lum_class,feh,${HEAD}\nBrackmere,giant,-0.4,${PHOT}\n`);
    await importText('second.csv', `id,${HEAD}\nBrackmere,${PHOT}\n`);
    expect(t.sqlite.prepare('SELECT lum_class AS c, feh_dex AS f FROM stars WHERE star_key = ?').get('Brackmere')).toEqual({ c: 'giant', f: -0.4 });
    const form = new FormData();
    form.append('file', new Blob([`id,lum_class,${HEAD}\nCorrowmere,IV,${PHOT}\n`]), 'third.csv');
    const u = await createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), config);
    await drainIntakeJobs(t.db);
    outcomeOf(t.db, u.job!.id);
    const d = getUpload(t.db, campaignId, u.id);
    const check = checkUpload(t.app, analyst, campaignId, u.id, { mapping: { layout: d.detected!.layout, columns: d.detected!.columns }, rules: d.detected!.rules });
    await drainIntakeJobs(t.db);
    const summary = outcomeOf(t.db, check.id).check as CheckSummary;
    expect(d.detected!.columns.lum_class).toEqual({ role: 'lum_class' });
    expect(summary.report).toEqual([
      expect.objectContaining({ file: 'third.csv', row: 1, line: 2, column: 'lum_class', columnNumber: 2, severity: 'error', message: 'row 1 (file line 2), column lum_class: luminosity class "IV" is not dwarf or giant (subgiants go with dwarfs)' }),
    ]);
    expect(summary.starCount).toBe(0);
  });
});
