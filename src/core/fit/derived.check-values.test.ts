// Derived quantities against the check values of docs/science.md (sources named beside each check).
import { describe, expect, it } from 'vitest';
import { AU_M, PARSEC_M, SOLAR_LUMINOSITY_W, SOLAR_RADIUS_M } from '../constants';
import {
  RADIUS_FACTOR,
  bolometricFluxCgs,
  deriveInto,
  dilutionFromThetaMas,
  luminosityLsun,
  radiusRsunFromTheta,
  thetaMasFromDilution,
  type Derived,
} from './derived';
import { FLAG_BITS } from './flags';

function blank(): Derived {
  return {
    teffK: NaN, teffErrFormalK: NaN, teffErrK: NaN, thetaMas: NaN, thetaErrMas: NaN, fbolCgs: NaN, fbolErrCgs: NaN,
    radiusRsun: NaN, radiusErrRsun: NaN, lumLsun: NaN, lumErrLsun: NaN, avErrMag: NaN, errScale: 1, corrTeffTheta: NaN, plxFlags: 0,
  };
}

describe('derived quantities', () => {
  it('θ of R☉ at 10 pc is 0.93009345 mas (IAU 2015 B3 R☉ + IAU 2012 B2 au)', () => {
    const s = (SOLAR_RADIUS_M / (10 * PARSEC_M)) ** 2;
    expect(thetaMasFromDilution(s)).toBeCloseTo(0.93009345, 8);
  });

  it('R/R☉ = 1.000000 for θ = 0.93009345 mas and ϖ = 100 mas (IAU 2015 + IAU 2012 au)', () => {
    expect(radiusRsunFromTheta(0.93009345, 100)).toBeCloseTo(1, 6);
    // au/(2R☉) = 107.516 (docs/science.md §7).
    expect(RADIUS_FACTOR).toBeCloseTo(107.516, 3);
    expect(RADIUS_FACTOR).toBe(AU_M / (2 * SOLAR_RADIUS_M));
  });

  it('doubling T at fixed R multiplies L by 16 (Stefan–Boltzmann law)', () => {
    expect(luminosityLsun(1.7, 2 * 5100) / luminosityLsun(1.7, 5100)).toBeCloseTo(16, 12);
    expect(bolometricFluxCgs(1e-17, 2 * 5100) / bolometricFluxCgs(1e-17, 5100)).toBeCloseTo(16, 12);
  });

  it('F_bol of the Sun at 1 au times 4π au² is L☉ to 1e-5 (IAU 2015 B3: 4πR☉²σ(5772 K)⁴ = 3.828e26 W)', () => {
    const s = (SOLAR_RADIUS_M / AU_M) ** 2;
    const fbolCgs = bolometricFluxCgs(s, 5772);
    const lumW = fbolCgs * 1e-3 * 4 * Math.PI * AU_M * AU_M; // erg s⁻¹ cm⁻² → W m⁻²
    expect(Math.abs(lumW / SOLAR_LUMINOSITY_W - 1)).toBeLessThan(1e-5);
    expect(luminosityLsun(1, 5772)).toBe(1);
  });

  it('propagates the covariance: σ²(ln F_bol) = σ²(ln s) + 16σ²(ln T) + 8cov, σ²(ln L) adds 4(σϖ/ϖ)² (docs/science.md §6–7)', () => {
    const d = blank();
    const cov = new Float64Array([1e-4, -1.8e-4, 0, -1.8e-4, 4e-4, 0, 0, 0, 0]); // ρ = −0.9
    const s = dilutionFromThetaMas(1);
    deriveInto(d, Math.log(6000), s, cov, false, 1, 0, 0, 20, 0.5);
    expect(d.teffErrK).toBeCloseTo(6000 * 0.01, 9);
    expect(d.thetaErrMas).toBeCloseTo(0.5 * 0.02, 12);
    const varLnF = 4e-4 + 16e-4 + 8 * -1.8e-4;
    expect(d.fbolErrCgs / d.fbolCgs).toBeCloseTo(Math.sqrt(varLnF), 12);
    expect(d.radiusErrRsun / d.radiusRsun).toBeCloseTo(Math.sqrt(4e-4 / 4 + (0.5 / 20) ** 2), 12);
    expect(d.lumErrLsun / d.lumLsun).toBeCloseTo(Math.sqrt(varLnF + 4 * (0.5 / 20) ** 2), 12);
    expect(d.plxFlags).toBe(0);
    // Scaling by √χ²_ν = 2 doubles every error; the model term adds to σ(ln T) in quadrature.
    deriveInto(d, Math.log(6000), s, cov, false, 2, 0.03 ** 2, 0, 20, 0.5);
    expect(d.teffErrFormalK).toBeCloseTo(60, 9);
    expect(d.teffErrK).toBeCloseTo(6000 * Math.sqrt(4e-4 + 0.03 ** 2), 9);
  });

  it('moves a model term in ln T along the T–θ degeneracy: σ(θ), σ(R) widen, σ(F_bol), σ(L) stay near their measurement values (docs/decisions/0022; Stefan–Boltzmann: F_bol = sσT⁴)', () => {
    const d = blank();
    const cov = new Float64Array([1e-4, -3.6e-4, 0, -3.6e-4, 16e-4, 0, 0, 0, 0]);
    const s = dilutionFromThetaMas(1);
    deriveInto(d, Math.log(6000), s, cov, false, 1, 0, 0, 20, 0.5);
    const base = { t: d.teffErrK / d.teffK, th: d.thetaErrMas / d.thetaMas, f: d.fbolErrCgs / d.fbolCgs, r: d.radiusErrRsun / d.radiusRsun, l: d.lumErrLsun / d.lumLsun };
    const m = 0.03 ** 2;
    const beta = -3.8; // bands around the peak: at fixed photometry s ∝ T^−3.8
    deriveInto(d, Math.log(6000), s, cov, false, 1, m, beta, 20, 0.5);
    expect((d.teffErrK / d.teffK) ** 2).toBeCloseTo(base.t ** 2 + m, 12);
    // σ²(ln θ) = σ²(ln s)/4 gains β²σ_m²/4.
    expect((d.thetaErrMas / d.thetaMas) ** 2).toBeCloseTo(base.th ** 2 + (beta * beta * m) / 4, 12);
    expect((d.radiusErrRsun / d.radiusRsun) ** 2).toBeCloseTo(base.r ** 2 + (beta * beta * m) / 4, 12);
    // σ²(ln F_bol) gains (β² + 16 + 8β)σ_m² = (β + 4)²σ_m², here 0.04 σ_m².
    expect((d.fbolErrCgs / d.fbolCgs) ** 2).toBeCloseTo(base.f ** 2 + (beta + 4) ** 2 * m, 12);
    expect((d.lumErrLsun / d.lumLsun) ** 2).toBeCloseTo(base.l ** 2 + (beta + 4) ** 2 * m, 12);
    // The old propagation (16σ_m² on var(ln F_bol), θ untouched) would give √(σ_f² + 16σ_m²) ≈ 12 %.
    expect(d.fbolErrCgs / d.fbolCgs).toBeLessThan(1.1 * base.f);
    expect(d.fbolErrCgs / d.fbolCgs).toBeLessThan(0.2 * Math.sqrt(base.f ** 2 + 16 * m));
    expect(d.thetaErrMas / d.thetaMas).toBeGreaterThan(1.5 * base.th);
  });

  it('flags parallaxes: ϖ ≤ 0 → no R, L; ϖ/σ < 5 → values with a flag; none → no R, L', () => {
    const d = blank();
    const cov = new Float64Array([1e-4, 0, 0, 0, 1e-4, 0, 0, 0, 0]);
    deriveInto(d, Math.log(5000), 1e-17, cov, false, 1, 0, 0, -0.3, 0.2);
    expect(d.plxFlags).toBe(FLAG_BITS.plx_nonpositive);
    expect(d.radiusRsun).toBeNaN();
    expect(d.lumLsun).toBeNaN();
    deriveInto(d, Math.log(5000), 1e-17, cov, false, 1, 0, 0, 1.0, 0.3);
    expect(d.plxFlags).toBe(FLAG_BITS.plx_weak);
    expect(d.radiusRsun).toBeGreaterThan(0);
    deriveInto(d, Math.log(5000), 1e-17, cov, false, 1, 0, 0, NaN, NaN);
    expect(d.plxFlags).toBe(FLAG_BITS.plx_missing);
    expect(d.radiusRsun).toBeNaN();
  });
});
