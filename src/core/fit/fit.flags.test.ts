// Blackbody mock stars and the blackbody model error: these test the pure Planck fit (planckOnly; the
// photosphere fit on real stars is tested in scripts/photosphere/photosphere.test.ts).
// Each flag code a fit can carry, produced on purpose: chi2_high (its threshold, and the error scaling
// its explanation announces), temp_cool_edge and no_convergence. The other codes are produced in
// fit.quality.test.ts. Mock photometry is π B_λ(T) through the starter passbands (self-consistency).
import { describe, expect, it } from 'vitest';
import { requireBand, starterBandLibrary } from '../bands';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { dilutionFromThetaMas } from './derived';
import { CHI2_HIGH } from './engine';
import { FLAG_EXPLANATIONS } from './flags';
import { fitStar, prepareFitModel, type FitFailure, type FitResult } from './fit-star';

const lib = starterBandLibrary();
const F99 = { law: 'f99' as const, rv: 3.1 };
const KEYS = ['U', 'B', 'V', 'R', 'I', 'J', 'H', 'Ks'];

function mock(keys: string[], teffK: number, thetaMas: number, relErr: number, wobble = 0): BandFlux[] {
  return keys.map((k, i) => {
    // A fixed ± pattern of relative size `wobble` that no Planck curve follows.
    const f = dilutionFromThetaMas(thetaMas) * planckBandMean(requireBand(lib, k), teffK, 0, F99) * (1 + (i % 2 === 0 ? wobble : -wobble));
    return { bandKey: k, fluxCgs: f, errCgs: relErr * Math.abs(f), upperLimit: false };
  });
}

const ok = (r: FitResult | FitFailure): FitResult => {
  if (!r.ok) throw new Error(r.message);
  return r;
};

describe('chi2_high', () => {
  const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });

  it('is raised above a reduced χ² of 5 and not below, and the reported errors are scaled by √χ²_ν', () => {
    expect(CHI2_HIGH).toBe(5);
    expect(FLAG_EXPLANATIONS.chi2_high).toContain('above 5');
    // With 1 % errors a ±4 % wobble gives χ²_ν ≈ 20, a ±1.5 % wobble χ²_ν ≈ 3 (χ² grows as its square).
    const poor = ok(fitStar(model, { id: 'poor', bandFluxes: mock(KEYS, 5500, 1, 0.01, 0.04) }));
    const fair = ok(fitStar(model, { id: 'fair', bandFluxes: mock(KEYS, 5500, 1, 0.01, 0.015) }));
    expect(poor.chi2Red).toBeGreaterThan(CHI2_HIGH);
    expect(poor.flags).toContain('chi2_high');
    expect(fair.chi2Red).toBeGreaterThan(1);
    expect(fair.chi2Red).toBeLessThan(CHI2_HIGH);
    expect(fair.flags).not.toContain('chi2_high');
    // Reported error = formal × max(1, √χ²_ν) for both (the model-error term is off).
    for (const r of [poor, fair]) expect(r.teffErrK! / r.teffErrFormalK!).toBeCloseTo(Math.sqrt(r.chi2Red!), 10);
    // A clean star keeps its formal error.
    const clean = ok(fitStar(model, { id: 'clean', bandFluxes: mock(KEYS, 5500, 1, 0.01) }));
    expect(clean.chi2Red).toBeLessThan(1);
    expect(clean.flags).not.toContain('chi2_high');
    expect(clean.teffErrK).toBe(clean.teffErrFormalK);
  });
});

describe('temp_cool_edge', () => {
  it('is raised for a star just cooler than the grid (1400 K against 1500 K), seen in the near- and mid-infrared', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const r = ok(fitStar(model, { id: 'brown', bandFluxes: mock(['J', 'H', 'Ks', 'W1', 'W2'], 1400, 0.5, 0.02) }));
    expect(r.flags).toContain('temp_cool_edge');
    expect(r.teffK).toBeCloseTo(1500, 6);
    // A 3000 K star on the same bands is inside the grid.
    expect(ok(fitStar(model, { id: 'cool', bandFluxes: mock(['J', 'H', 'Ks', 'W1', 'W2'], 3000, 0.5, 0.02) })).flags).not.toContain('temp_cool_edge');
  });
});

describe('no_convergence', () => {
  it('is the failure of photometry no positive curve can follow (every flux negative)', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const bands = mock(KEYS, 5500, 1, 0.05).map((b) => ({ ...b, fluxCgs: -b.fluxCgs }));
    const r = fitStar(model, { id: 'negative', bandFluxes: bands });
    expect(r.ok).toBe(false);
    expect((r as FitFailure).reason).toBe('no_convergence');
    expect(FLAG_EXPLANATIONS.no_convergence).toMatch(/did not converge/);
  });
});

describe('no_dof', () => {
  // Degrees of freedom = fitted detections − fitted parameters (common practice for a least-squares fit):
  // Teff and θ, plus A_V when it is fitted. Upper limits are censored values, not detections.
  it('is raised when the fit has as many detections as parameters, and not with one more', () => {
    const model = prepareFitModel(lib, { planckOnly: true });
    const two = ok(fitStar(model, { id: 'two', bandFluxes: mock(['V', 'Ks'], 5500, 1, 0.02) }));
    expect(two.nBands).toBe(2);
    expect(two.flags).toContain('no_dof');
    expect(two.chi2Red).toBeNull();
    const three = ok(fitStar(model, { id: 'three', bandFluxes: mock(['V', 'J', 'Ks'], 5500, 1, 0.02) }));
    expect(three.flags).not.toContain('no_dof');
    // An upper limit added to two detections does not give a degree of freedom.
    const limit = mock(['B'], 5500, 1, 0.02).map((b) => ({ ...b, fluxCgs: b.fluxCgs * 3, upperLimit: true }));
    expect(ok(fitStar(model, { id: 'two+limit', bandFluxes: [...mock(['V', 'Ks'], 5500, 1, 0.02), ...limit] })).flags).toContain('no_dof');
    expect(FLAG_EXPLANATIONS.no_dof).toMatch(/as many fitted bands as fitted parameters/i);
  });

  it('counts A_V as a parameter when it is fitted, and is raised by the calibrated fit too', () => {
    const planck = prepareFitModel(lib, { planckOnly: true, fitAv: true });
    const r = ok(fitStar(planck, { id: 'av3', bandFluxes: mock(['B', 'V', 'Ks'], 5500, 1, 0.02) }));
    expect(r.nBands).toBe(3);
    expect(r.flags).toContain('no_dof');
    const r4 = ok(fitStar(planck, { id: 'av4', bandFluxes: mock(['B', 'V', 'J', 'Ks'], 5500, 1, 0.02) }));
    expect(r4.flags).not.toContain('no_dof');
    const kiln = prepareFitModel(lib);
    const k = ok(fitStar(kiln, { id: 'kiln2', bandFluxes: mock(['V', 'Ks'], 5500, 1, 0.02) }));
    expect(k.photosphere).not.toBeNull();
    expect(k.flags).toContain('no_dof');
  });
});
