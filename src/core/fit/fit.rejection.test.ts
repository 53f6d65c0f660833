// Robust rejection (rejection.ts, decision 0027) on mock stars made with the Kiln photosphere itself
// (Planck band mean × the model's correction, through the starter passbands: self-consistency), with
// Gaussian noise of the size the fit assumes. Real stars (HIP 19849, clean benchmark stars) are in
// scripts/photosphere/rejection.test.ts. The χ² tail probabilities are checked against scipy.
import { describe, expect, it } from 'vitest';
import { requireBand, starterBandLibrary } from '../bands';
import { defaultPhotosphere } from '../photosphere';
import { bandScatter, lnCorrection } from '../photosphere/model';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { dilutionFromThetaMas } from './derived';
import { fitStar, prepareFitModel, type FitFailure, type FitResult } from './fit-star';
import { mulberry32, normalDeviate } from './random';
import { lnChi2Tail, MAX_REJECTED, REJECT_FALSE_RATE } from './rejection';

const lib = starterBandLibrary();
const data = defaultPhotosphere();
const F99 = { law: 'f99' as const, rv: 3.1 };
const KEYS = ['G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2'];
const model = prepareFitModel(lib);

const ok = (r: FitResult | FitFailure): FitResult => {
  if (!r.ok) throw new Error(r.message);
  return r;
};

/** Photosphere-shaped photometry; `noise` draws each band with σ² = (1 %)² + floor² + model scatter². */
function mock(teffK: number, factor: Record<string, number> = {}, rand?: () => number): BandFlux[] {
  return KEYS.map((k) => {
    const f0 = dilutionFromThetaMas(1) * planckBandMean(requireBand(lib, k), teffK, 0, F99) * Math.exp(lnCorrection(data, 'dwarf', k, Math.log(teffK)));
    const sc = bandScatter(data, 'dwarf', k, teffK);
    const sd = Math.sqrt(0.01 ** 2 + 0.02 ** 2 + sc * sc);
    const f = f0 * (factor[k] ?? 1) * (rand ? 1 + sd * normalDeviate(rand) : 1);
    return { bandKey: k, fluxCgs: f, errCgs: 0.01 * f0, upperLimit: false };
  });
}

const star = (id: string, bandFluxes: BandFlux[]) => ({ id, bandFluxes, parallaxMas: 50, parallaxErrMas: 0.05, lumClass: 'dwarf' as const });

describe('χ² tail probabilities', () => {
  it('agree with scipy.stats.chi2.logsf (scipy 1.x, Debian python3-scipy) to 1e-6 relative for 1 and 2 degrees of freedom, and at the 5 % points beyond', () => {
    const ref: [number, number, number][] = [
      [1, 1, -1.1478744644493275],
      [10, 1, -6.459612454150122],
      [50, 1, -27.200889545537436],
      [400, 1, -203.22400819053732],
      [10, 2, -5.0],
      [87.8, 2, -43.9],
    ];
    for (const [x, k, v] of ref) expect(Math.abs(lnChi2Tail(x, k) / v - 1)).toBeLessThan(1e-6);
    // Beyond two degrees of freedom only the screen uses it (Wilson–Hilferty): the 5 % points of
    // scipy.stats.chi2.isf(0.05, k) come out at 5 ± 0.25 %.
    for (const [k, x] of [[3, 7.814727903251178], [6, 12.59158724374398], [10, 18.30703805327515], [20, 31.41043284423092]]) {
      expect(Math.abs(Math.exp(lnChi2Tail(x, k)) / 0.05 - 1)).toBeLessThan(0.05);
    }
  });
});

describe('robust rejection on mock stars', () => {
  it('rejects no band of noisy clean stars beyond its stated false-rejection rate (0.1 %; 2000 stars, at most 6)', () => {
    const rand = mulberry32(20261203);
    let lost = 0;
    for (let i = 0; i < 2000; i++) {
      const r = ok(fitStar(model, star(`clean${i}`, mock(5800, {}, rand))));
      if (r.flags.includes('rejected')) lost++;
    }
    expect(REJECT_FALSE_RATE).toBe(0.001);
    // Expected ≤ 2 (Bonferroni is an upper bound); P(Poisson(2) > 6) ≈ 0.5 %.
    expect(lost).toBeLessThanOrEqual(6);
  });

  it('rejects one band 40 % too bright with its reason, and the temperature is that of the clean bands', () => {
    const r = ok(fitStar(model, star('badJ', mock(5800, { J: 1.4 }))));
    expect(r.excluded).toEqual([{ band: 'J', reason: 'rejected', detail: expect.stringMatching(/^inconsistent with the other bands: \d+\.\dσ above the fit made without it \(Δχ² = [\d.]+ for 1 band, p = [\d.]+e-\d+; threshold 0\.001\/\d+ sets tried\)$/) }]);
    expect(r.flags).toContain('rejected');
    expect(r.flags).not.toContain('outlier');
    expect(Math.abs(r.teffK! / 5800 - 1)).toBeLessThan(0.002);
    expect(r.rejection!.sets).toHaveLength(1);
    // Switched off, the band stays and pulls the fit.
    const off = ok(fitStar(model, star('badJ', mock(5800, { J: 1.4 })), { reject: false }));
    expect(off.excluded).toEqual([]);
    expect(off.flags).toContain('outlier');
    expect(off.rejection).toBeNull();
  });

  it('rejects two neighbouring bands that are wrong together (W1 and W2 half as bright), which single-band tests miss', () => {
    const r = ok(fitStar(model, star('badWISE', mock(5200, { W1: 0.5, W2: 0.5 }))));
    expect(r.excluded.map((e) => [e.band, e.reason])).toEqual([
      ['W1', 'rejected'],
      ['W2', 'rejected'],
    ]);
    expect(r.rejection!.sets[0].bands).toEqual(['W1', 'W2']);
    expect(Math.abs(r.teffK! / 5200 - 1)).toBeLessThan(0.002);
  });

  it(`never takes out more than ${MAX_REJECTED} bands, nor leaves fewer than the parameters plus one`, () => {
    const r = ok(fitStar(model, star('bad3', mock(5800, { BP: 2, J: 1.5, W2: 0.6 }))));
    expect(r.excluded.filter((e) => e.reason === 'rejected').length).toBeLessThanOrEqual(MAX_REJECTED);
    const three = ok(fitStar(model, star('three', mock(5800, { RP: 1.5 }).filter((b) => ['G', 'RP', 'J'].includes(b.bandKey)))));
    expect(three.excluded).toEqual([]);
  });

  it('is not run for a Planck-only fit (blackbody residuals reflect the model, not bad bands)', () => {
    const planck = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(planck, star('badJ', mock(5800, { J: 1.4 }))));
    expect(r.rejection).toBeNull();
    expect(r.excluded).toEqual([]);
  });
});
