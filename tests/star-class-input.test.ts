// A star's own luminosity class and [Fe/H] (input columns lum_class and feh) on a real migrated
// SQLite: an upload with them stores them on the star, a batch fit uses the class as given (not
// the batch's choice) and records [Fe/H], raising feh_far far from solar; a re-upload without the
// columns keeps what the star had. Star names are invented; the magnitudes are rough values of a
// Sun-like dwarf at 20 pc (M_V ≈ 4.8, from memory; only the bookkeeping is checked here).
import { describe, expect, it } from 'vitest';
import { checkUpload, createUpload, getUpload, type CheckSummary } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { fitAndDrain } from '../src/seed/review-stars';
import { importText, useIntakeCampaign } from './support/intake-campaign';

const c = useIntakeCampaign();

const PHOT = '6.34,0.02,6.18,0.003,6.51,0.003,5.69,0.004,5.20,0.02,4.88,0.02,4.83,0.02,50,0.05';
const HEAD = 'V,V_err,G,G_err,BP,BP_err,RP,RP_err,J,J_err,H,H_err,Ks,Ks_err,parallax_mas,parallax_err_mas';

describe('lum_class and feh input columns', () => {
  it('are stored on the star and used by the fit: the class as given, [Fe/H] recorded, feh_far far from solar', async () => {
    await importText(c, 'season.csv', `id,lum_class,feh,${HEAD}\nBrackmere,giant,-2.1,${PHOT}\nFennlow,dwarf,0.05,${PHOT}\nGildstead,,,${PHOT}\n`);
    const stars = c.t.sqlite.prepare('SELECT star_key AS k, lum_class AS c, feh_dex AS f FROM stars WHERE campaign_id = ? ORDER BY star_key').all(c.campaignId);
    expect(stars).toEqual([
      { k: 'Brackmere', c: 'giant', f: -2.1 },
      { k: 'Fennlow', c: 'dwarf', f: 0.05 },
      { k: 'Gildstead', c: null, f: null },
    ]);
    // The batch says dwarf for everyone; a star's own class wins over it.
    const batchId = await fitAndDrain(c.t.app, c.analyst, c.campaignId, { lumClass: 'dwarf' });
    const fits = c.t.sqlite
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
    await importText(c, 'first.csv', `id,lum_class,feh,${HEAD}\nBrackmere,giant,-0.4,${PHOT}\n`);
    await importText(c, 'second.csv', `id,${HEAD}\nBrackmere,${PHOT}\n`);
    expect(c.t.sqlite.prepare('SELECT lum_class AS c, feh_dex AS f FROM stars WHERE star_key = ?').get('Brackmere')).toEqual({ c: 'giant', f: -0.4 });
    const form = new FormData();
    form.append('file', new Blob([`id,lum_class,${HEAD}\nCorrowmere,IV,${PHOT}\n`]), 'third.csv');
    const u = await createUpload(c.t.app, c.analyst, c.campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), c.config);
    await drainIntakeJobs(c.t.db);
    outcomeOf(c.t.db, u.job!.id);
    const d = getUpload(c.t.db, c.campaignId, u.id);
    const check = checkUpload(c.t.app, c.analyst, c.campaignId, u.id, { mapping: { layout: d.detected!.layout, columns: d.detected!.columns }, rules: d.detected!.rules });
    await drainIntakeJobs(c.t.db);
    const summary = outcomeOf(c.t.db, check.id).check as CheckSummary;
    expect(d.detected!.columns.lum_class).toEqual({ role: 'lum_class' });
    expect(summary.report).toEqual([
      expect.objectContaining({ file: 'third.csv', row: 1, line: 2, column: 'lum_class', columnNumber: 2, severity: 'error', message: 'row 1 (file line 2), column lum_class: luminosity class "IV" is not dwarf or giant (subgiants go with dwarfs)' }),
    ]);
    expect(summary.starCount).toBe(0);
  });
});
