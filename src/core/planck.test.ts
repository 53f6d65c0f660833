import { describe, expect, it } from 'vitest';
import {
  AU_M,
  PARSEC_M,
  SOLAR_LUMINOSITY_W,
  SOLAR_RADIUS_M,
  SOLAR_TEFF_K,
  fnuJyToFlambdaCgs,
  flambdaCgsToFnuJy,
  abMagToFnuJy,
  fnuJyToAbMag,
  MAS_PER_RAD,
} from './constants';
import { luminosityW, planckLambdaCgsAngstrom, planckLambdaSI, surfaceFluxWm2, wienPeakM } from './planck';

describe('Planck law', () => {
  it('B_λ(5772 K, 500 nm) = 2.62385406e13 W m⁻³ sr⁻¹', () => {
    // Source: astropy BlackBody with CODATA 2018 constants (independent code), docs/science.md check table.
    expect(planckLambdaSI(500e-9, 5772) / 2.62385406e13 - 1).toBeCloseTo(0, 8);
  });

  it('the cgs-per-Å variant equals the SI form × 1e-7', () => {
    // Unit identity: 1 W m⁻² m⁻¹ = 1e7 erg s⁻¹ / (1e4 cm² · 1e10 Å).
    for (const [lAng, t] of [[5000, 5772], [1500, 30000], [220000, 3000], [3e6, 2500]]) {
      expect(planckLambdaCgsAngstrom(lAng, t) / (planckLambdaSI(lAng * 1e-10, t) * 1e-7) - 1).toBeCloseTo(0, 12);
    }
  });

  it('follows Rayleigh–Jeans 2ckT/λ⁴ far on the red side (expm1 keeps precision)', () => {
    // Limit of Planck's law for hc/λkT ≪ 1 (common practice): B_λ → 2ckT/λ⁴, next term −x/2.
    const lambdaM = 1; // 1 m at 10 000 K: x = 1.44e-6
    const rj = (2 * 299792458 * 1.380649e-23 * 1e4) / lambdaM ** 4;
    const x = (6.62607015e-34 * 299792458) / (lambdaM * 1.380649e-23 * 1e4);
    expect(planckLambdaSI(lambdaM, 1e4) / (rj * (1 - x / 2)) - 1).toBeCloseTo(0, 10);
  });

  it('is exactly 0 (not NaN) where the exponent overflows, and for non-positive inputs', () => {
    expect(planckLambdaSI(10e-9, 1000)).toBe(0); // x ≈ 1439
    expect(planckLambdaCgsAngstrom(100, 1000)).toBe(0);
    expect(planckLambdaCgsAngstrom(5000, 0)).toBe(0);
    expect(planckLambdaCgsAngstrom(-1, 5000)).toBe(0);
  });
});

describe('Stefan–Boltzmann and Wien', () => {
  it('σT⁴ at 5772 K = 6.29386e7 W m⁻²', () => {
    // Source: CODATA 2018 σ = 5.670374419e-8.
    expect(surfaceFluxWm2(5772) / 6.29386e7 - 1).toBeLessThan(1e-6);
    expect(surfaceFluxWm2(5772) / 6.29386e7 - 1).toBeGreaterThan(-1e-6);
  });

  it('4πR☉²σ(5772 K)⁴ = L☉ = 3.828e26 W to 1e-5', () => {
    // Source: IAU 2015 Resolution B3 nominal values (L☉ is defined consistently with R☉ and Teff☉).
    expect(Math.abs(luminosityW(SOLAR_RADIUS_M, SOLAR_TEFF_K) / SOLAR_LUMINOSITY_W - 1)).toBeLessThan(1e-5);
  });

  it('doubling T at fixed R multiplies L by 16', () => {
    // Stefan–Boltzmann law, L ∝ T⁴.
    expect(luminosityW(SOLAR_RADIUS_M, 2 * 5772) / luminosityW(SOLAR_RADIUS_M, 5772)).toBeCloseTo(16, 12);
  });

  it('Wien peak at 5772 K = 502.04 nm', () => {
    // Source: CODATA 2018 b = 2.897771955e-3 m K.
    expect(wienPeakM(5772) * 1e9).toBeCloseTo(502.04, 2);
  });

  it('the Wien peak really is the maximum of B_λ', () => {
    // Independent of b: locate the maximum of our own B_λ numerically (golden-section search).
    for (const t of [3000, 5772, 20000]) {
      let a = 0.5 * wienPeakM(t);
      let b = 2 * wienPeakM(t);
      const g = (Math.sqrt(5) - 1) / 2;
      for (let i = 0; i < 200; i++) {
        const c = b - g * (b - a);
        const d = a + g * (b - a);
        if (planckLambdaSI(c, t) > planckLambdaSI(d, t)) b = d;
        else a = c;
      }
      expect((a + b) / 2 / wienPeakM(t) - 1).toBeCloseTo(0, 6);
    }
  });

  it('rule of thumb λ_peak[nm] ≈ 3×10⁶/T holds within 4 % over 2500–40 000 K', () => {
    // Common practice (b ≈ 2.9e-3 m K rounded to 3e-3).
    for (let t = 2500; t <= 40000; t += 500) {
      const peakNm = wienPeakM(t) * 1e9;
      expect(Math.abs(3e6 / t / peakNm - 1)).toBeLessThan(0.04);
    }
  });
});

describe('constants and units', () => {
  it('θ of R☉ at 10 pc is 0.93009345 mas and R/R☉ = 107.516 θ/ϖ', () => {
    // Source: IAU 2015 B3 R☉, IAU 2012 B2 au, pc = au·648000/π (IAU 2015 B2); docs/science.md check table.
    const thetaMas = ((2 * SOLAR_RADIUS_M) / (10 * PARSEC_M)) * MAS_PER_RAD;
    expect(thetaMas).toBeCloseTo(0.93009345, 8);
    expect(AU_M / (2 * SOLAR_RADIUS_M)).toBeCloseTo(107.516, 3);
  });

  it('1 Jy at 5500 Å is 9.9105e-13 erg s⁻¹ cm⁻² Å⁻¹ (F_λ = F_ν c/λ²), and back', () => {
    // 1e-23 · 2.99792458e18 / 5500² = 9.91049e-13 (hand calculation from the definitions).
    expect(fnuJyToFlambdaCgs(1, 5500)).toBeCloseTo(9.910494e-13, 18);
    expect(flambdaCgsToFnuJy(fnuJyToFlambdaCgs(3.7, 12345), 12345)).toBeCloseTo(3.7, 12);
  });

  it('AB magnitude 0 is 3631 Jy (Oke & Gunn 1983)', () => {
    expect(abMagToFnuJy(0)).toBe(3631);
    expect(fnuJyToAbMag(3631 * 10 ** -4)).toBeCloseTo(10, 12);
  });
});
