// Derived quantities and their uncertainties (docs/science.md §6–7).
//   θ [mas] = 2√s · 206 264 806.247 (s = (θ/2)², θ in rad)
//   R/R☉ = θ[mas]/ϖ[mas] · au/(2R☉) (≈ 107.516; IAU 2015 B3 R☉, IAU 2012 B2 au)
//   F_bol = s σ T⁴ (Stefan–Boltzmann), L/L☉ = (R/R☉)² (T/5772 K)⁴ (IAU 2015 B3 nominal Teff☉)
//   σ²(ln R) = σ²(ln s)/4 + (σ_ϖ/ϖ)²
//   σ²(ln F_bol) = σ²(ln s) + 16 σ²(ln T) + 8 cov(ln s, ln T)   (T and s are anti-correlated, ρ ≈ −0.9)
//   σ²(ln L) = σ²(ln F_bol) + 4 (σ_ϖ/ϖ)²
// A model term σ_m² in ln T (the photosphere's calibration term, or the blackbody model-error term) is
// a temperature error at fixed photometry, so it moves along the T–θ degeneracy of the fit: with
// β = d(ln s*)/d(ln T) of the closed-form scale, it adds σ_m² to var(ln T), β σ_m² to cov(ln T, ln s) and
// β² σ_m² to var(ln s) (docs/decisions/0022). It widens σ(θ) and σ(R); σ(F_bol) grows only by
// (β + 4)² σ_m², small when the bands straddle the peak (β ≈ −4).
// Uncertainties are linear (first-order) propagations of the reported covariance; the Monte Carlo
// option in fit-star.ts gives asymmetric intervals when they matter.

import { AU_M, MAS_PER_RAD, SOLAR_RADIUS_M, SOLAR_TEFF_K, STEFAN_BOLTZMANN_SIGMA } from '../constants';
import { FLAG_BITS } from './flags';

/** au / (2 R☉) = 107.516…: R/R☉ per (θ[mas]/ϖ[mas]). */
export const RADIUS_FACTOR = AU_M / (2 * SOLAR_RADIUS_M);
/** σ in erg s⁻¹ cm⁻² K⁻⁴ (1 W m⁻² = 1e3 erg s⁻¹ cm⁻²). */
export const STEFAN_BOLTZMANN_CGS = STEFAN_BOLTZMANN_SIGMA * 1e3;
/** Parallax over error below which 1/ϖ is flagged as biased (docs/science.md §7). */
export const PLX_SNR_MIN = 5;

export interface Derived {
  teffK: number;
  teffErrFormalK: number;
  teffErrK: number;
  thetaMas: number;
  thetaErrMas: number;
  fbolCgs: number;
  fbolErrCgs: number;
  radiusRsun: number;
  radiusErrRsun: number;
  lumLsun: number;
  lumErrLsun: number;
  avErrMag: number;
  /** max(1, √χ²_ν): the factor applied to the formal errors. */
  errScale: number;
  /** Correlation of the reported Teff and θ errors (that of ln T and ln s, model term included). */
  corrTeffTheta: number;
  /** Parallax flag bits (plx_*). */
  plxFlags: number;
}

export function thetaMasFromDilution(s: number): number {
  return 2 * Math.sqrt(s) * MAS_PER_RAD;
}

export function dilutionFromThetaMas(thetaMas: number): number {
  const half = thetaMas / MAS_PER_RAD / 2;
  return half * half;
}

export function radiusRsunFromTheta(thetaMas: number, parallaxMas: number): number {
  return (RADIUS_FACTOR * thetaMas) / parallaxMas;
}

export function luminosityLsun(radiusRsun: number, teffK: number): number {
  const t = teffK / SOLAR_TEFF_K;
  return radiusRsun * radiusRsun * t * t * t * t;
}

export function bolometricFluxCgs(s: number, teffK: number): number {
  const t2 = teffK * teffK;
  return s * STEFAN_BOLTZMANN_CGS * t2 * t2;
}

/**
 * Fills d from the solution (u = ln T, s) and the formal covariance of (ln T, ln s, A_V) (row-major 3×3).
 * scale multiplies the formal standard errors; modelVarLnT (σ_m²) is propagated along the T–θ
 * degeneracy with beta = d(ln s*)/d(ln T) (see the header).
 */
export function deriveInto(
  d: Derived,
  u: number,
  s: number,
  cov: Float64Array,
  avFree: boolean,
  scale: number,
  modelVarLnT: number,
  beta: number,
  parallaxMas: number,
  parallaxErrMas: number,
): void {
  const teffK = Math.exp(u);
  const sc2 = scale * scale;
  const varUFormal = cov[0];
  const m = modelVarLnT > 0 ? modelVarLnT : 0;
  const varU = varUFormal * sc2 + m;
  const varLnS = cov[4] * sc2 + beta * beta * m;
  const covUS = cov[1] * sc2 + beta * m;
  d.errScale = scale;
  d.corrTeffTheta = covUS / Math.sqrt(varU * varLnS);
  d.teffK = teffK;
  d.teffErrFormalK = teffK * Math.sqrt(varUFormal);
  d.teffErrK = teffK * Math.sqrt(varU);
  d.avErrMag = avFree ? Math.sqrt(cov[8] * sc2) : NaN;
  const theta = thetaMasFromDilution(s);
  d.thetaMas = theta;
  d.thetaErrMas = 0.5 * theta * Math.sqrt(varLnS);
  const fbol = bolometricFluxCgs(s, teffK);
  let varLnF = varLnS + 16 * varU + 8 * covUS;
  if (varLnF < 0) varLnF = 0; // rounding only: the covariance is positive definite
  d.fbolCgs = fbol;
  d.fbolErrCgs = fbol * Math.sqrt(varLnF);
  d.plxFlags = 0;
  if (!Number.isFinite(parallaxMas)) {
    d.plxFlags = FLAG_BITS.plx_missing;
  } else if (parallaxMas <= 0) {
    d.plxFlags = FLAG_BITS.plx_nonpositive;
  }
  if (d.plxFlags !== 0) {
    d.radiusRsun = d.radiusErrRsun = d.lumLsun = d.lumErrLsun = NaN;
    return;
  }
  const plxErr = Number.isFinite(parallaxErrMas) && parallaxErrMas > 0 ? parallaxErrMas : 0;
  if (plxErr > 0 && parallaxMas / plxErr < PLX_SNR_MIN) d.plxFlags = FLAG_BITS.plx_weak;
  const relPlx = plxErr / parallaxMas;
  const r = radiusRsunFromTheta(theta, parallaxMas);
  d.radiusRsun = r;
  d.radiusErrRsun = r * Math.sqrt(varLnS / 4 + relPlx * relPlx);
  const l = luminosityLsun(r, teffK);
  d.lumLsun = l;
  d.lumErrLsun = l * Math.sqrt(varLnF + 4 * relPlx * relPlx);
}
