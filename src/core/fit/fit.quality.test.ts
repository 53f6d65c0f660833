// Blackbody mock stars and the blackbody model error: these test the pure Planck fit (planckOnly; the
// photosphere fit on real stars is tested in scripts/photosphere/photosphere.test.ts).
// Quality handling of the fit (docs/science.md §8): censored upper limits, Rayleigh–Jeans lower bounds,
// clipping, infrared excess, parallax flags, too few bands, Monte Carlo, and the A_V-fitting LM
// against the general-purpose ml-levenberg-marquardt library.
import { describe, expect, it } from 'vitest';
import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { starterBandLibrary, requireBand } from '../bands';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { prepareFitModel, fitStar, starEntries, engineSettings, type FitResult, type FitFailure } from './fit-star';
import { dilutionFromThetaMas } from './derived';
import { lnPhiAt } from './grid';
import { FLAG_EXPLANATIONS, FLAG_BITS } from './flags';
import { mulberry32, normalDeviate } from './random';

const lib = starterBandLibrary();
const F99 = { law: 'f99' as const, rv: 3.1 };

function flux(key: string, teffK: number, thetaMas: number, avMag = 0): number {
  return dilutionFromThetaMas(thetaMas) * planckBandMean(requireBand(lib, key), teffK, avMag, F99);
}

function mock(keys: string[], teffK: number, thetaMas: number, relErr = 0.02, avMag = 0): BandFlux[] {
  return keys.map((k) => {
    const f = flux(k, teffK, thetaMas, avMag);
    return { bandKey: k, fluxCgs: f, errCgs: relErr * f, upperLimit: false };
  });
}

function ok(r: FitResult | FitFailure): FitResult {
  if (!r.ok) throw new Error(r.message);
  return r;
}

/** Censored χ² by direct integration (no tables): detections always, limits only when exceeded. */
function censoredChi2(bands: BandFlux[], teffK: number, s: number): number {
  let chi2 = 0;
  for (const b of bands) {
    const m = s * planckBandMean(requireBand(lib, b.bandKey), teffK, 0, F99);
    const r = (b.fluxCgs - m) / b.errCgs;
    if (b.upperLimit && m <= b.fluxCgs) continue;
    chi2 += r * r;
  }
  return chi2;
}

describe('upper limits are censored', () => {
  const det = mock(['B', 'V', 'G', 'RP', 'J', 'H', 'Ks'], 5200, 1);
  // Perturb the detections so the limit matters: a bluer-than-true star.
  det[0].fluxCgs *= 1.05;
  det[1].fluxCgs *= 1.03;

  it('a limit far above the model changes nothing', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const base = ok(fitStar(model, { id: 'a', bandFluxes: det }));
    const ul: BandFlux = { bandKey: 'U', fluxCgs: 10 * flux('U', 5200, 1), errCgs: flux('U', 5200, 1), upperLimit: true };
    const withUl = ok(fitStar(model, { id: 'a', bandFluxes: [...det, ul] }));
    // Same minimum (the two runs take different code paths, so equal to rounding only).
    expect(Math.abs((withUl.teffK as number) / (base.teffK as number) - 1)).toBeLessThan(1e-12);
    expect(Math.abs(withUl.chi2 / base.chi2 - 1)).toBeLessThan(1e-10);
    expect(withUl.flags).not.toContain('upper_limit_active');
    expect(withUl.bandsUsed).not.toContain('U');
  });

  it('a limit below the model pulls the fit and is penalised only on the violating side', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const base = ok(fitStar(model, { id: 'b', bandFluxes: det }));
    const uModel = base.modelFluxes.B; // scale reference only
    expect(uModel).toBeGreaterThan(0);
    const limit = 0.6 * flux('U', 5200, 1);
    const ul: BandFlux = { bandKey: 'U', fluxCgs: limit, errCgs: 0.05 * limit, upperLimit: true };
    const bands = [...det, ul];
    const r = ok(fitStar(model, { id: 'b', bandFluxes: bands }));
    expect(r.flags).toContain('upper_limit_active');
    expect(r.teffK as number).toBeLessThan(base.teffK as number);
    // Local optimality of the censored χ² checked with direct band integrals (independent of the tables).
    const T = r.teffK as number;
    const s = dilutionFromThetaMas(r.thetaMas as number);
    const c0 = censoredChi2(bands, T, s);
    expect(Math.abs(c0 - r.chi2)).toBeLessThan(1e-4 * (1 + c0));
    for (const [dt, ds] of [[1.002, 1], [0.998, 1], [1, 1.002], [1, 0.998], [1.002, 0.992], [0.998, 1.008]]) {
      expect(censoredChi2(bands, T * dt, s * ds)).toBeGreaterThan(c0 - 1e-6);
    }
  });

  it('an upper limit does not count as a detection', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const bands = [...mock(['V'], 5000, 1), { bandKey: 'Ks', fluxCgs: 1e-12, errCgs: 0, upperLimit: true }];
    const r = fitStar(model, { id: 'c', bandFluxes: bands });
    expect(r.ok).toBe(false);
    expect((r as FitFailure).reason).toBe('few_bands');
  });
});

describe('Rayleigh–Jeans tail', () => {
  it('a 45 000 K star seen only from V to Ks with 5 % errors gets a lower bound, not a value', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'hot', bandFluxes: mock(['V', 'G', 'RP', 'J', 'H', 'Ks'], 45000, 0.01, 0.05) }));
    expect(r.flags).toContain('temp_lower_bound');
    expect(r.teffK).toBeNull();
    expect(r.teffLowerK).not.toBeNull();
    expect(r.teffLowerK as number).toBeLessThan(45000);
    expect(r.teffLowerK as number).toBeGreaterThan(5000);
    expect(r.thetaMas).toBeNull();
    // The bound is where the profile χ² (s in closed form, direct band integrals) rises by 1.645²
    // above the minimum (one-sided 95 %; χ²_min = 0 for noise-free data, common practice).
    const bands = mock(['V', 'G', 'RP', 'J', 'H', 'Ks'], 45000, 0.01, 0.05).map((b) => ({ ...b, errCgs: Math.hypot(b.errCgs, 0.02 * b.fluxCgs) }));
    const T = r.teffLowerK as number;
    let a = 0;
    let bb = 0;
    for (const b of bands) {
      const phi = planckBandMean(requireBand(lib, b.bandKey), T, 0, F99);
      a += (b.fluxCgs * phi) / b.errCgs ** 2;
      bb += (phi * phi) / b.errCgs ** 2;
    }
    expect(censoredChi2(bands, T, a / bb)).toBeCloseTo(2.7055, 3);
  });

  it('a 30 000 K star seen only in the near-IR (2 % errors) gets a lower bound', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'hot', bandFluxes: mock(['J', 'H', 'Ks', 'W1', 'W2'], 30000, 0.01, 0.05) }));
    expect(r.flags).toContain('temp_lower_bound');
    expect(r.teffLowerK as number).toBeLessThan(30000);
  });

  it('the same 45 000 K star with 2 % errors keeps a value with a wide error', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'hot', bandFluxes: mock(['V', 'G', 'RP', 'J', 'H', 'Ks'], 45000, 0.01, 0.02) }));
    expect(r.flags).not.toContain('temp_lower_bound');
    expect(Math.abs((r.teffK as number) / 45000 - 1)).toBeLessThan(1e-4);
    expect(r.teffErrK as number).toBeGreaterThan(2000);
  });

  it('the same star with far-UV bands gets a value', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'hot', bandFluxes: mock(['FUV', 'NUV', 'U', 'B', 'V', 'J'], 45000, 0.01) }));
    expect(r.flags).not.toContain('temp_lower_bound');
    expect(Math.abs((r.teffK as number) / 45000 - 1)).toBeLessThan(1e-3);
  });
});

describe('outliers and clipping', () => {
  const keys = ['B', 'V', 'BP', 'G', 'RP', 'J', 'H', 'Ks'];
  const bad = mock(keys, 6000, 0.8, 0.01);
  bad[5].fluxCgs *= 1.3; // J off by 30 %

  it('flags the outlier without clipping', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const r = ok(fitStar(model, { id: 'o', bandFluxes: bad }));
    expect(r.flags).toContain('outlier');
    expect(Math.abs(r.residualsSigma.J)).toBeGreaterThan(3);
    expect(r.excluded).toEqual([]);
  });

  it('clips the worst band, lists it and recovers T', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const r = ok(fitStar(model, { id: 'o', bandFluxes: bad }, { clip: true }));
    expect(r.flags).toContain('clipped');
    expect(r.flags).not.toContain('outlier');
    expect(r.excluded).toEqual([{ band: 'J', reason: 'clipped' }]);
    expect(r.bandsUsed).not.toContain('J');
    expect(r.residualsSigma.J).toBeGreaterThan(3);
    expect(Math.abs((r.teffK as number) / 6000 - 1)).toBeLessThan(1e-4);
  });

  it('clips at most two bands', () => {
    const worse = mock(keys, 6000, 0.8, 0.01);
    worse[1].fluxCgs *= 0.6;
    worse[5].fluxCgs *= 1.4;
    worse[7].fluxCgs *= 1.25;
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const r = ok(fitStar(model, { id: 'o', bandFluxes: worse }, { clip: true }));
    expect(r.excluded.filter((e) => e.reason === 'clipped')).toHaveLength(2);
    expect(r.flags).toContain('outlier');
  });

  it('honours excludeBands', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const r = ok(fitStar(model, { id: 'o', bandFluxes: bad }, { excludeBands: ['J'] }));
    expect(r.excluded).toEqual([{ band: 'J', reason: 'excluded_by_option' }]);
    expect(Math.abs((r.teffK as number) / 6000 - 1)).toBeLessThan(1e-4);
  });
});

describe('infrared excess', () => {
  it('bands beyond 5 µm are diagnostics by default and report their excess', () => {
    const bands = mock(['B', 'V', 'G', 'J', 'H', 'Ks', 'W1', 'W3', 'W4'], 5500, 1);
    bands[7].fluxCgs *= 3; // W3 excess (dust)
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'ir', bandFluxes: bands }));
    expect(r.bandsUsed).toContain('W1');
    expect(r.bandsUsed).not.toContain('W3');
    expect(r.excluded).toEqual([
      { band: 'W3', reason: 'long_wavelength' },
      { band: 'W4', reason: 'long_wavelength' },
    ]);
    expect(r.flags).toContain('ir_excess');
    expect(r.irExcessSigma as number).toBeGreaterThan(3);
    expect(Math.abs((r.teffK as number) / 5500 - 1)).toBeLessThan(1e-4);
    const incl = ok(fitStar(model, { id: 'ir', bandFluxes: bands }, { includeLongBands: true }));
    expect(incl.bandsUsed).toContain('W3');
    expect(incl.irExcessSigma).toBeNull();
  });
});

describe('parallax and failures', () => {
  const bands = mock(['B', 'V', 'G', 'RP', 'J', 'Ks'], 5772, 0.93009345);
  it('R☉-sized 5772 K star at 10 pc: R = 1 R☉, L = 1 L☉ (IAU 2015 B3 nominal values)', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'sun', bandFluxes: bands, parallaxMas: 100, parallaxErrMas: 0.1 }));
    expect(r.radiusRsun as number).toBeCloseTo(1, 4);
    expect(r.lumLsun as number).toBeCloseTo(1, 3);
    expect(r.flags).toEqual([]);
  });
  it('flags weak, non-positive and missing parallaxes', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const weak = ok(fitStar(model, { id: 's', bandFluxes: bands, parallaxMas: 1, parallaxErrMas: 0.5 }));
    expect(weak.flags).toContain('plx_weak');
    expect(weak.radiusRsun).not.toBeNull();
    const neg = ok(fitStar(model, { id: 's', bandFluxes: bands, parallaxMas: -0.2, parallaxErrMas: 0.5 }));
    expect(neg.flags).toContain('plx_nonpositive');
    expect(neg.radiusRsun).toBeNull();
    expect(neg.lumLsun).toBeNull();
    const none = ok(fitStar(model, { id: 's', bandFluxes: bands }));
    expect(none.flags).toContain('plx_missing');
  });
  it('fails clearly with too few bands', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const one = fitStar(model, { id: 'lonely', bandFluxes: bands.slice(0, 1) });
    expect(one.ok).toBe(false);
    expect((one as FitFailure).reason).toBe('few_bands');
    expect((one as FitFailure).message).toMatch(/lonely.*at least 2/);
    const two = fitStar(model, { id: 'pair', bandFluxes: bands.slice(0, 2) }, { fitAv: true });
    expect((two as FitFailure).reason).toBe('few_bands');
    expect((two as FitFailure).message).toMatch(/at least 3 .*A_V/);
  });
  it('every flag has a one-line explanation', () => {
    for (const code of Object.keys(FLAG_BITS)) expect(FLAG_EXPLANATIONS[code as keyof typeof FLAG_EXPLANATIONS]).toMatch(/\S/);
  });
});

describe('Monte Carlo intervals', () => {
  it('are reproducible with a fixed seed and about ±1σ wide', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const bands = mock(['B', 'V', 'G', 'RP', 'J', 'H', 'Ks'], 4800, 1.2, 0.02);
    const opts = { monteCarlo: { samples: 400, seed: 5 } };
    const a = ok(fitStar(model, { id: 'mc', bandFluxes: bands, parallaxMas: 20, parallaxErrMas: 1 }, opts));
    const b = ok(fitStar(model, { id: 'mc', bandFluxes: bands, parallaxMas: 20, parallaxErrMas: 1 }, opts));
    expect(a.monteCarlo).toEqual(b.monteCarlo);
    const mc = a.monteCarlo!;
    const halfWidth = (mc.teffK.p84 - mc.teffK.p16) / 2;
    expect(halfWidth / (a.teffErrFormalK as number)).toBeGreaterThan(0.85);
    expect(halfWidth / (a.teffErrFormalK as number)).toBeLessThan(1.15);
    expect(mc.radiusRsun).not.toBeNull();
  });
});

describe('A_V fitted within bounds', () => {
  it('an unreddened star stops at the lower bound with a flag and no A_V error', () => {
    const model = prepareFitModel(lib, { planckOnly: true, fitAv: true });
    // Built with A_V = −0.3 (bluer than any reddened blackbody): the unconstrained optimum lies below 0.
    const bands = mock(['NUV', 'U', 'B', 'V', 'G', 'RP', 'J', 'H', 'Ks'], 6500, 0.5, 0.02, -0.3);
    const r = ok(fitStar(model, { id: 'b', bandFluxes: bands }));
    expect(r.avMag).toBe(0);
    expect(r.flags).toContain('av_at_bound');
    expect(r.avErrMag).toBeNull();
    expect(r.covariance.params).toEqual(['teffK', 's']);
  });
  it('honours custom bounds', () => {
    const model = prepareFitModel(lib, { planckOnly: true, fitAv: true, avBoundsMag: [0.5, 1.0] });
    const r = ok(fitStar(model, { id: 'b', bandFluxes: mock(['NUV', 'U', 'B', 'V', 'G', 'RP', 'J', 'H', 'Ks'], 6500, 0.5, 0.02, 2.0) }));
    expect(r.avMag).toBe(1.0);
    expect(r.flags).toContain('av_at_bound');
  });
});

describe('A_V fitting agrees with ml-levenberg-marquardt', () => {
  it('finds the same minimum on noisy stars (ours reaches an equal or lower χ²), with either engine solver', () => {
    const keys = ['NUV', 'U', 'B', 'V', 'G', 'RP', 'J', 'H', 'Ks'];
    const model = prepareFitModel(lib, { planckOnly: true, fitAv: true, floorFraction: 0 });
    const rand = mulberry32(42);
    for (let n = 0; n < 5; n++) {
      const teffK = 4500 + 6000 * rand();
      const av = 0.3 + 2.5 * rand();
      const bands = mock(keys, teffK, 1, 0.02, av).map((b) => ({ ...b, fluxCgs: b.fluxCgs + b.errCgs * normalDeviate(rand) }));
      const r = ok(fitStar(model, { id: 'lm', bandFluxes: bands }));
      // The engine's fallback solver (plain 3-parameter LM) reaches the same minimum.
      const entries = starEntries(model, { id: 'lm', bandFluxes: bands }, model.options).entries;
      model.engine.begin();
      for (const e of entries) model.engine.add(e.bandIndex, e.flux, e.sigma, e.upper, e.exclude);
      expect(model.engine.run({ ...engineSettings(model.options), avSolver: 'lm' }, 0, NaN, NaN)).toBe(0);
      expect(Math.abs(model.engine.derived.teffK / (r.teffK as number) - 1)).toBeLessThan(1e-4);
      expect(Math.abs(model.engine.avMag - r.avMag)).toBeLessThan(1e-3);
      expect(model.engine.chi2).toBeCloseTo(r.chi2, 4);
      const idx = bands.map((b) => model.tables.bandIndex(b.bandKey));
      const y = bands.map((b) => b.fluxCgs / b.errCgs);
      // Whitened residuals: model_i(p) = s φ_i(u, A_V)/σ_i with p = (u, ln s + 40, A_V) (offset keeps ln s O(1)).
      const fn = ([u, ls, a]: number[]) => (i: number) => Math.exp(ls - 40 + lnPhiAt(model.tables, idx[i], u, a)) / bands[i].errCgs;
      const start = [Math.log(r.teffK as number) + 0.02, Math.log(dilutionFromThetaMas(r.thetaMas as number)) + 40 - 0.05, r.avMag + 0.1];
      const ref = levenbergMarquardt(
        { x: idx.map((_, i) => i), y },
        fn,
        { initialValues: start, maxIterations: 2000, errorTolerance: 1e-14, gradientDifference: 1e-7, centralDifference: true, damping: 1e-3, minValues: [Math.log(1500), 0, 0], maxValues: [Math.log(60000), 100, 10] },
      );
      const refChi2 = ref.parameterError;
      expect(r.chi2).toBeLessThanOrEqual(refChi2 * (1 + 1e-6) + 1e-9);
      expect(Math.abs(Math.exp(ref.parameterValues[0]) / (r.teffK as number) - 1)).toBeLessThan(2e-3);
      expect(Math.abs(ref.parameterValues[2] - r.avMag)).toBeLessThan(0.02);
    }
  });
});

describe('documentation', () => {
  it('the fit README lists every flag code', async () => {
    const { readFileSync } = await import('node:fs');
    const readme = readFileSync(new URL('./README.md', import.meta.url), 'utf8');
    for (const code of Object.keys(FLAG_EXPLANATIONS)) expect(readme, code).toContain(`\`${code}\``);
  });
});
