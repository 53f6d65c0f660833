// Blackbody mock stars and the blackbody model error: these test the pure Planck fit (planckOnly; the
// photosphere fit on real stars is tested in scripts/photosphere/photosphere.test.ts).
// Recovery of mock stars built by DIRECT integration (planckBandMean, not the fit's tables):
// docs/science.md check table, "noise-free mock stars, 8 bands … T and θ recovered to 1e-4" (self-consistency),
// and noisy mock stars for the honesty of the errors (pulls ≈ N(0, 1), 68 % coverage of 1σ; common practice).
import { describe, expect, it } from 'vitest';
import { starterBandLibrary, requireBand } from '../bands';
import { planckBandMean } from '../photometry';
import type { BandFlux, ExtinctionSpec } from '../types';
import { prepareFitModel, fitStar, type FitResult } from './fit-star';
import { dilutionFromThetaMas } from './derived';
import { mulberry32, normalDeviate } from './random';

const lib = starterBandLibrary();
const EIGHT = ['B', 'V', 'BP', 'G', 'RP', 'J', 'H', 'Ks'];
const F99: ExtinctionSpec = { law: 'f99', rv: 3.1 };

function mockFluxes(keys: string[], teffK: number, thetaMas: number, avMag: number, relErr: number, ext = F99): BandFlux[] {
  const s = dilutionFromThetaMas(thetaMas);
  return keys.map((k) => {
    const f = s * planckBandMean(requireBand(lib, k), teffK, avMag, ext);
    return { bandKey: k, fluxCgs: f, errCgs: relErr * f, upperLimit: false };
  });
}

function ok(r: ReturnType<typeof fitStar>): FitResult {
  if (!r.ok) throw new Error(r.message);
  return r;
}

describe('noise-free mock stars (self-consistency, 1e-4)', () => {
  const cases: [number, number, number][] = [
    [3500, 2.1, 0],
    [4500, 0.8, 0],
    [5772, 0.93009345, 0],
    [7300, 0.31, 0.6],
    [9800, 0.2, 1.37],
    [15000, 0.05, 0],
    [30000, 0.02, 2.3],
  ];
  it.each(cases)('A_V fixed: T = %d K, θ = %f mas, A_V = %f', (teffK, thetaMas, avMag) => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const r = ok(fitStar(model, { id: 'mock', bandFluxes: mockFluxes(EIGHT, teffK, thetaMas, avMag, 0.01), avMag }));
    expect(Math.abs((r.teffK as number) / teffK - 1)).toBeLessThan(1e-4);
    expect(Math.abs((r.thetaMas as number) / thetaMas - 1)).toBeLessThan(1e-4);
    expect(r.chi2).toBeLessThan(1e-4);
    expect(r.bandsUsed).toHaveLength(8);
  });

  const free: [number, number, number][] = [
    [4200, 1.5, 0.4],
    [6100, 0.7, 1.1],
    [9000, 0.3, 2.6],
    [20000, 0.04, 0.9],
  ];
  it.each(free)('A_V fitted: T = %d K, θ = %f mas, A_V = %f', (teffK, thetaMas, avMag) => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0, fitAv: true });
    // Nine bands from the far UV to 2 µm so that T and A_V separate.
    const keys = ['NUV', 'U', 'B', 'V', 'G', 'RP', 'J', 'H', 'Ks'];
    const r = ok(fitStar(model, { id: 'mock', bandFluxes: mockFluxes(keys, teffK, thetaMas, avMag, 0.01) }));
    expect(Math.abs((r.teffK as number) / teffK - 1)).toBeLessThan(1e-4);
    expect(Math.abs((r.thetaMas as number) / thetaMas - 1)).toBeLessThan(1e-4);
    expect(Math.abs(r.avMag - avMag)).toBeLessThan(1e-3);
    expect(r.avFitted).toBe(true);
    expect(r.covariance.params).toEqual(['teffK', 's', 'avMag']);
  });

  it('recovers the same star under CCM89 and OD94 with R_V = 4', () => {
    for (const law of ['ccm89', 'od94'] as const) {
      const ext: ExtinctionSpec = { law, rv: 4 };
      const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0, law, rv: 4 });
      const r = ok(fitStar(model, { id: 'mock', bandFluxes: mockFluxes(EIGHT, 6400, 0.5, 1.2, 0.01, ext), avMag: 1.2 }));
      expect(Math.abs((r.teffK as number) / 6400 - 1)).toBeLessThan(1e-4);
    }
  });
});

describe('noisy mock stars (fixed seed): errors are honest', () => {
  it('pulls (T_fit − T_true)/σ_T have spread ≈ 1 and 1σ covers ≈ 68 %', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const rand = mulberry32(20240607);
    const pulls: number[] = [];
    const thetaPulls: number[] = [];
    const n = 3000;
    for (let i = 0; i < n; i++) {
      const teffK = Math.exp(Math.log(3500) + rand() * Math.log(30000 / 3500));
      const thetaMas = 0.05 + rand() * 2;
      const relErr = 0.005 + 0.03 * rand();
      const clean = mockFluxes(EIGHT, teffK, thetaMas, 0, relErr);
      const noisy = clean.map((b) => ({ ...b, fluxCgs: b.fluxCgs + b.errCgs * normalDeviate(rand) }));
      const r = ok(fitStar(model, { id: `n${i}`, bandFluxes: noisy }));
      if (r.teffK === null) continue;
      // Formal errors: with correct noise the χ²_ν scaling would bias the spread low.
      pulls.push((r.teffK - teffK) / (r.teffErrFormalK as number));
      // thetaErrMas is the reported (scaled) error: undo the scaling to compare with the formal one.
      const scale = r.chi2Red !== null && r.chi2Red > 1 ? Math.sqrt(r.chi2Red) : 1;
      thetaPulls.push((((r.thetaMas as number) - thetaMas) / (r.thetaErrMas as number)) * scale);
    }
    expect(pulls.length).toBeGreaterThan(0.99 * n);
    const sd = (a: number[]) => {
      const m = a.reduce((x, y) => x + y, 0) / a.length;
      return Math.sqrt(a.reduce((x, y) => x + (y - m) * (y - m), 0) / (a.length - 1));
    };
    const coverage = pulls.filter((p) => Math.abs(p) < 1).length / pulls.length;
    expect(sd(pulls)).toBeGreaterThan(0.9);
    expect(sd(pulls)).toBeLessThan(1.1);
    expect(coverage).toBeGreaterThan(0.65);
    expect(coverage).toBeLessThan(0.71);
    expect(sd(thetaPulls)).toBeGreaterThan(0.9);
    expect(sd(thetaPulls)).toBeLessThan(1.1);
  });

  it('reported errors (scaled by √χ²_ν when above 1) cover at least as often as claimed', () => {
    const model = prepareFitModel(lib, { planckOnly: true, floorFraction: 0 });
    const rand = mulberry32(99);
    let inside = 0;
    let n = 0;
    for (let i = 0; i < 1500; i++) {
      const teffK = 4000 + rand() * 8000;
      const clean = mockFluxes(EIGHT, teffK, 1, 0, 0.02);
      const noisy = clean.map((b) => ({ ...b, fluxCgs: b.fluxCgs + b.errCgs * normalDeviate(rand) }));
      const r = ok(fitStar(model, { id: `r${i}`, bandFluxes: noisy }));
      n++;
      if (Math.abs((r.teffK as number) - teffK) < (r.teffErrK as number)) inside++;
    }
    expect(inside / n).toBeGreaterThan(0.68);
    expect(inside / n).toBeLessThan(0.85);
  });
});
