// The survey rules on the web path, on a real migrated SQLite (decision 0028): an upload with a
// survey's own column names is imported through the intake, the values the rules leave out are kept
// with their reasons (left_out_values), the star keeps its given distance, its parallax's origin and
// the RUWE flag, and a batch fitted by the worker lists the left-out values among its excluded bands,
// raises possible_companion, and uses the given distance or the Gaia DR3 parallax with the batch's
// zero-point. Star names are invented; the magnitudes are rough values of a Sun-like dwarf at 100 pc
// (M_V ≈ 4.8, from memory; only the bookkeeping is checked here). Limits and their sources:
// src/core/input/survey-rules.ts (AllWISE W1 saturation onset 8.1 mag, WISE All-Sky Explanatory
// Supplement, Cutri et al. 2012; RUWE 1.4, Lindegren et al. 2021).
import { describe, expect, it } from 'vitest';
import { starSheet } from '../src/server/star-sheet';
import { fitAndDrain } from '../src/seed/review-stars';
import { importText, useIntakeCampaign } from './support/intake-campaign';

const c = useIntakeCampaign();

const HEAD =
  'source_id,parallax,parallax_error,ruwe,phot_g_mean_mag,phot_g_mean_mag_error,phot_bp_mean_mag,phot_bp_mean_mag_error,phot_rp_mean_mag,phot_rp_mean_mag_error,' +
  'j_m,j_msigcom,h_m,h_msigcom,k_m,k_msigcom,ph_qual,w1mpro,w1sigmpro,distance_pc,distance_lo_pc,distance_hi_pc';
/** G BP RP, 2MASS J H Ks with letters, W1 (brighter than 8.1: saturated). */
const PHOT = (w1: number, letters = 'AAA') => `9.63,0.003,9.98,0.003,9.12,0.004,8.42,0.02,8.11,0.03,8.05,0.02,${letters},${w1},0.03`;

const FILE =
  `${HEAD}\n` +
  // RUWE 2.1 at G 9.6: possible_companion; no given distance, so 1/(ϖ − Z) with the Gaia DR3 zero-point.
  `Kiln-Ashcombe,10,0.02,2.1,${PHOT(7.95)},,,\n` +
  // Ks letter C: left out by the quality rule; a given distance with its interval.
  `Kiln-Brindle,10,0.02,1.0,${PHOT(7.95, 'AAC')},98,95,101\n`;

type Detail = { excluded: { band: string; reason: string; detail?: string }[]; distance?: { pc: number; source: string; parallaxMas: number | null; zeroPointMas: number | null } };

function fitOf(batchId: string, starKey: string): { flags: string[]; detail: Detail; bands: string[] } {
  const r = c.t.sqlite
    .prepare('SELECT r.flags, r.detail, r.bands_used FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? AND s.star_key = ?')
    .get(batchId, starKey) as { flags: string; detail: string; bands_used: string };
  return { flags: r.flags.split(' '), detail: JSON.parse(r.detail) as Detail, bands: r.bands_used.split(' ') };
}

describe('the survey rules through the web intake and the worker', () => {
  it('keeps left-out values with their reasons, stores the distance, the parallax origin and the RUWE flag, and the fit uses them', async () => {
    const { summary } = await importText(c, 'kiln-gaia-2mass-wise.csv', FILE, { source: 'kiln-survey' });
    expect(summary.valuesLeftOut).toBe(3);
    const leftOut = c.t.sqlite
      .prepare('SELECT s.star_key AS star, l.band_key AS band, l.source, l.reason, l.detail FROM left_out_values l JOIN stars s ON s.id = l.star_id ORDER BY s.star_key, l.band_key')
      .all() as { star: string; band: string; source: string; reason: string; detail: string }[];
    expect(leftOut.map((l) => [l.star, l.band, l.source, l.reason])).toEqual([
      ['Kiln-Ashcombe', 'W1', 'kiln-survey', 'saturated'],
      ['Kiln-Brindle', 'Ks', 'kiln-survey', 'quality_letter'],
      ['Kiln-Brindle', 'W1', 'kiln-survey', 'saturated'],
    ]);
    expect(leftOut[0].detail).toMatch(/W1 7\.95 is brighter than the bright limit 8\.1 mag \(WISE All-Sky Explanatory Supplement/);
    // No measurement row for a left-out value: only the record of why.
    expect(c.t.sqlite.prepare("SELECT count(*) FROM measurements WHERE band_key = 'W1'").pluck().get()).toBe(0);
    expect(c.t.sqlite.prepare('SELECT star_key AS k, parallax_origin AS o, possible_companion AS c, distance_pc AS d, distance_lo_pc AS lo, distance_hi_pc AS hi FROM stars ORDER BY star_key').all()).toEqual([
      { k: 'Kiln-Ashcombe', o: 'gaia_dr3', c: 1, d: null, lo: null, hi: null },
      { k: 'Kiln-Brindle', o: 'gaia_dr3', c: 0, d: 98, lo: 95, hi: 101 },
    ]);

    const batchId = await fitAndDrain(c.t.app, c.analyst, c.campaignId);
    const a = fitOf(batchId, 'Kiln-Ashcombe');
    const b = fitOf(batchId, 'Kiln-Brindle');
    expect(a.flags).toContain('possible_companion');
    expect(b.flags).not.toContain('possible_companion');
    expect(a.detail.excluded.find((e) => e.band === 'W1')).toEqual({ band: 'W1', reason: 'saturated', detail: leftOut[0].detail });
    expect(b.detail.excluded.map((e) => [e.band, e.reason])).toEqual(expect.arrayContaining([['Ks', 'quality_letter'], ['W1', 'saturated']]));
    expect(b.bands).not.toContain('Ks');
    // ϖ − Z with Z = −0.017 mas (Lindegren et al. 2021, from memory): 10.017 mas, 1000/10.017 pc.
    expect(a.detail.distance).toMatchObject({ source: 'gaia_dr3_parallax', zeroPointMas: -0.017 });
    expect(a.detail.distance!.pc).toBeCloseTo(1000 / 10.017, 9);
    expect(b.detail.distance).toMatchObject({ source: 'input_distance', pc: 98, parallaxMas: null, zeroPointMas: null });

    // A batch with the zero-point set to 0 uses 1/ϖ as given.
    const plain = await fitAndDrain(c.t.app, c.analyst, c.campaignId, { gaiaParallaxZeroPointMas: 0 });
    expect(fitOf(plain, 'Kiln-Ashcombe').detail.distance!.pc).toBeCloseTo(100, 9);

    // The star sheet lists the left-out values with the rule in words.
    const sheet = starSheet(c.t.db, c.campaignId, 'Kiln-Brindle');
    expect(sheet.leftOut.map((l) => [l.bandKey, l.reason])).toEqual([['Ks', 'quality_letter'], ['W1', 'saturated']]);
  });

  it('a re-import of the same source replaces a left-out mark by the value, and a value by a left-out mark', async () => {
    await importText(c, 'first.csv', FILE, { source: 'kiln-survey' });
    // Now W1 9.0 is fainter than the limit: a value again; Ashcombe's RUWE is fine, its flag is cleared.
    await importText(c, 'second.csv', `${HEAD}\nKiln-Ashcombe,10,0.02,1.1,${PHOT(9.0)},,,\nKiln-Brindle,10,0.02,1.0,${PHOT(9.0, 'AAA')},,,\n`, { source: 'kiln-survey' });
    expect(c.t.sqlite.prepare('SELECT count(*) FROM left_out_values').pluck().get()).toBe(0);
    expect(c.t.sqlite.prepare("SELECT count(*) FROM measurements WHERE band_key IN ('W1', 'Ks')").pluck().get()).toBe(4);
    expect(c.t.sqlite.prepare("SELECT possible_companion FROM stars WHERE star_key = 'Kiln-Ashcombe'").pluck().get()).toBe(0);
    // A re-upload without a distance keeps the one the star had.
    expect(c.t.sqlite.prepare("SELECT distance_pc FROM stars WHERE star_key = 'Kiln-Brindle'").pluck().get()).toBe(98);
    // And back: W1 saturated again takes the value of that source out.
    await importText(c, 'third.csv', `${HEAD}\nKiln-Ashcombe,10,0.02,1.1,${PHOT(7.9)},,,\n`, { source: 'kiln-survey' });
    expect(c.t.sqlite.prepare("SELECT count(*) FROM measurements m JOIN stars s ON s.id = m.star_id WHERE s.star_key = 'Kiln-Ashcombe' AND m.band_key = 'W1'").pluck().get()).toBe(0);
    expect(c.t.sqlite.prepare('SELECT reason FROM left_out_values').pluck().all()).toEqual(['saturated']);
  });
});
