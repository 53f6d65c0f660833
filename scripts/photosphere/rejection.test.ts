// Robust rejection (src/core/fit/rejection.ts, decision 0027) on real stars, with the Kiln photosphere
// rebuilt without the star under test (or its fold), never with a correction calibrated on it:
// - HIP 19849 in the Gaia FGK benchmark table v3 (Soubiran et al. 2024, A&A 682, A145;
//   ../shared/data/benchmark/gbs_v3_dev_half.fits, read here directly): fundamental Teff 5181 K there;
//   its AllWISE W1/W2 (quality letters A) are a wrong cross-match, 3.7 mag fainter than Ks;
// - the benchmark stars with clean photometry (Gaia DR3 G/BP/RP and 2MASS quality-A bands, the
//   calibrators' own selection), in a 5-fold split by star: rejection must leave them alone.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { requireBand, starterBandLibrary } from '../../src/core/bands';
import { fitStar, prepareFitModel, type FitFailure, type FitResult } from '../../src/core/fit';
import { REJECT_FALSE_RATE } from '../../src/core/fit/rejection';
import { readFitsTable } from '../../src/core/input/fits-file';
import { defaultPhotosphere } from '../../src/core/photosphere';
import { measurementToBandFlux } from '../../src/core/photometry';
import type { BandFlux } from '../../src/core/types';
import { BENCHMARK_FILE, benchmarkCalibrators, calibPoints, sequenceCalibrators } from './calibrators';
import { buildData } from './loo';

const lib = starterBandLibrary();
const committed = defaultPhotosphere();
const teffTerm = { dwarf: committed.classes.dwarf.teffTerm, giant: committed.classes.giant.teffTerm };
const points = calibPoints([...sequenceCalibrators(), ...benchmarkCalibrators()]);
const modelWithout = (stars: string[]) => prepareFitModel(lib, {}, buildData(points.filter((p) => !stars.includes(`benchmark:${p.star}`)), undefined, teffTerm));

const ok = (r: FitResult | FitFailure): FitResult => {
  if (!r.ok) throw new Error(r.message);
  return r;
};

/** One benchmark row's photometry as the table gives it: Gaia fluxes, 2MASS and AllWISE magnitudes with their letters. */
function benchmarkStar(hip: string, opts: { tmassLetters: string; wise: boolean }) {
  const t = readFitsTable(new Uint8Array(readFileSync(BENCHMARK_FILE)), { source: 'gbs_v3_dev_half.fits' });
  const ids = t.getColumn('hip');
  const i = ids.findIndex((v) => String(v).trim() === hip);
  if (i < 0) throw new Error(`${hip} not in the benchmark table`);
  const num = (c: string) => t.getFloat64(c)[i];
  const text = (c: string) => String(t.getColumn(c)[i] ?? '');
  const fluxes: BandFlux[] = [];
  const add = (key: string, mag: number, err: number) => {
    if (Number.isFinite(mag) && err > 0) fluxes.push(measurementToBandFlux(requireBand(lib, key), { bandKey: key, mag, magErr: err }));
  };
  for (const [key, f] of [['G', 'phot_g_mean'], ['BP', 'phot_bp_mean'], ['RP', 'phot_rp_mean']]) {
    // σ_m = 2.5/ln 10 · σ_F/F (the Gaia archive's own conversion; common practice).
    add(key, num(`${f}_mag`), ((2.5 / Math.LN10) * num(`${f}_flux_error`)) / num(`${f}_flux`));
  }
  const q2 = text('ph_qual_tmass');
  (['J', 'H', 'Ks'] as const).forEach((key, j) => {
    const col = key === 'Ks' ? 'ks' : key.toLowerCase();
    if (opts.tmassLetters.includes(q2[j])) add(key, num(`${col}_m`), num(`${col}_msigcom`));
  });
  if (opts.wise) for (const key of ['W1', 'W2']) add(key, num(`${key.toLowerCase()}mpro`), num(`${key.toLowerCase()}mpro_error`));
  return { id: hip, bandFluxes: fluxes, parallaxMas: num('parallax'), parallaxErrMas: num('parallax_error'), teffK: num('teff'), tmass: q2, ks: num('ks_m'), w1: num('w1mpro'), wiseQual: text('ph_qual_allwise') };
}

describe('HIP 19849: a wrong AllWISE cross-match', () => {
  const model = modelWithout(['HIP19849']);

  it('the table says what the issue says: Teff 5181 K, W1 3.7 mag fainter than Ks with quality letter A', () => {
    const s = benchmarkStar('HIP19849', { tmassLetters: 'ABCDEU', wise: true });
    expect(s.teffK).toBe(5181);
    expect(s.w1 - s.ks).toBeCloseTo(3.73, 1);
    expect(s.wiseQual.slice(0, 2)).toBe('AA');
  });

  for (const rules of [
    { name: 'with the 2MASS quality rule (A and B kept: none here)', tmassLetters: 'AB' },
    { name: 'with no quality rules (every 2MASS value, letters D C D)', tmassLetters: 'ABCDE' },
  ]) {
    it(`rejects W1 and W2 and recovers Teff within 3 % of 5181 K, ${rules.name}`, () => {
      const s = benchmarkStar('HIP19849', { tmassLetters: rules.tmassLetters, wise: true });
      // Without rejection the fit is fooled (the issue: a 12 720 K lower bound): this test can fail.
      const fooled = ok(fitStar(model, s, { reject: false }));
      expect(fooled.teffK === null || fooled.teffK > 7000).toBe(true);
      const r = ok(fitStar(model, s));
      expect(r.teffK).not.toBeNull();
      expect(Math.abs(r.teffK! / 5181 - 1)).toBeLessThan(0.03);
      const rejected = r.excluded.filter((e) => e.reason === 'rejected');
      expect(rejected.map((e) => e.band).sort()).toEqual(['W1', 'W2']);
      for (const e of rejected) expect(e.detail).toMatch(/^inconsistent with the other bands: \d+\.\dσ below the fit made without it/);
      expect(r.flags).toContain('rejected');
      expect(r.bandsUsed).not.toContain('W1');
      // The Planck fit beside it uses the same bands.
      expect(r.planck.teffK).not.toBeNull();
      expect(Math.abs(r.planck.teffK! / 5181 - 1)).toBeLessThan(0.06);
      expect(r.rejection?.sets[0].bands.sort()).toEqual(['W1', 'W2']);
    });
  }
});

describe('clean benchmark photometry loses no band (5-fold split)', () => {
  const cals = benchmarkCalibrators()
    .filter((c) => c.fehDex !== null && Math.abs(c.fehDex) <= 0.5)
    .sort((a, b) => Number(a.star.replace(/\D/g, '')) - Number(b.star.replace(/\D/g, '')));
  const results: { star: string; teffK: number; r: FitResult }[] = [];
  for (let k = 0; k < 5; k++) {
    const fold = cals.filter((_, i) => i % 5 === k);
    const model = modelWithout(fold.map((c) => c.star));
    for (const c of fold) {
      const r = fitStar(model, { id: c.star, bandFluxes: c.inputFluxes, parallaxMas: c.parallaxMas, parallaxErrMas: c.parallaxErrMas, lumClass: c.cls, fehDex: c.fehDex });
      if (r.ok) results.push({ star: c.star, teffK: c.teffK, r });
    }
  }

  it('no Sun-like dwarf (5500–6100 K) loses a band, and at most 2 % of all the clean stars do', () => {
    expect(results.length).toBeGreaterThan(50);
    const sunLike = results.filter((x) => x.teffK >= 5500 && x.teffK <= 6100 && x.r.lumClass === 'dwarf');
    expect(sunLike.length).toBeGreaterThanOrEqual(5);
    for (const x of sunLike) expect(x.r.excluded.filter((e) => e.reason === 'rejected')).toEqual([]);
    const lost = results.filter((x) => x.r.flags.includes('rejected'));
    // α = 0.1 % per star for Gaussian errors; real errors have heavier tails, so allow 2 %.
    expect(REJECT_FALSE_RATE).toBe(0.001);
    expect(lost.length).toBeLessThanOrEqual(Math.floor(0.02 * results.length));
  });
});
