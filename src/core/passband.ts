// Integrals through a passband curve: pivot wavelength and band means of any spectrum.
// The curve is linear between its nodes (as published tables are read by synphot and others);
// each interval is cut into pieces no wider than 1 % of λ and integrated with 3-point
// Gauss–Legendre, so ∫ F(λ) R(λ) λ dλ is accurate to ~1e-9 even for a steep Wien tail.
//
// Conventions (docs/science.md, "Band means"; Bessell & Murphy 2012, PASP 124, 140, for the notation):
//   per-photon R:  ⟨F_λ⟩ = ∫F R λ dλ / ∫R λ dλ,   λ_p² = ∫R λ dλ / ∫R λ⁻¹ dλ
//   energy S:      ⟨F_λ⟩ = ∫F S dλ / ∫S dλ,       λ_p² = ∫S dλ / ∫S λ⁻² dλ   (R = S/λ)
//   ⟨F_ν⟩ = ⟨F_λ⟩ λ_p² / c.
import { SPEED_OF_LIGHT_ANGSTROM_S } from './constants';
import type { Band, ResponseConvention } from './types';

/** What the integrals need from a band. */
export type PassbandCurve = Pick<Band, 'wavelengthAngstrom' | 'response' | 'convention'> & { key?: string };

/** Quadrature of a band: ⟨f⟩ = Σ weight_q f(λ_q) / weightSum. */
export interface BandQuadrature {
  wavelengthAngstrom: Float64Array;
  /** R(λ)·λ (photon) or S(λ) (energy) times the Gauss–Legendre weight and interval width. */
  weight: Float64Array;
  weightSum: number;
}

const MAX_PIECE_FRACTION = 0.01;
// 3-point Gauss–Legendre nodes and weights on [0, 1].
const GL_T = [0.5 - Math.sqrt(0.15), 0.5, 0.5 + Math.sqrt(0.15)];
const GL_W = [5 / 18, 8 / 18, 5 / 18];

const quadratureCache = new WeakMap<object, BandQuadrature>();
// Pivots are asked for once per measurement when converting catalogues: keep them per curve too.
const pivotCache = new WeakMap<object, number>();

function describe(curve: PassbandCurve): string {
  return curve.key ? `band ${curve.key}` : 'passband curve';
}

/** Checks a curve: same lengths, ≥ 2 nodes, strictly ascending positive wavelengths, finite responses ≥ 0, some > 0. */
export function validateCurve(curve: PassbandCurve): void {
  const w = curve.wavelengthAngstrom;
  const r = curve.response;
  const what = describe(curve);
  if (w.length !== r.length) throw new Error(`${what}: ${w.length} wavelengths but ${r.length} responses`);
  if (w.length < 2) throw new Error(`${what}: a curve needs at least 2 nodes`);
  let any = false;
  for (let i = 0; i < w.length; i++) {
    if (!(Number.isFinite(w[i]) && w[i] > 0)) throw new Error(`${what}: node ${i + 1} has wavelength ${w[i]} (must be > 0 Å)`);
    if (i > 0 && !(w[i] > w[i - 1])) throw new Error(`${what}: wavelengths must ascend strictly (node ${i + 1}: ${w[i]} after ${w[i - 1]})`);
    if (!(Number.isFinite(r[i]) && r[i] >= 0)) throw new Error(`${what}: node ${i + 1} has response ${r[i]} (must be ≥ 0)`);
    if (r[i] > 0) any = true;
  }
  if (!any) throw new Error(`${what}: the response is zero everywhere`);
  if (curve.convention !== 'photon' && curve.convention !== 'energy') {
    throw new Error(`${what}: convention must be 'photon' or 'energy', got ${String(curve.convention)}`);
  }
}

function conventionWeight(convention: ResponseConvention, wavelengthAngstrom: number): number {
  return convention === 'photon' ? wavelengthAngstrom : 1;
}

/** Quadrature nodes and weights of a band (cached per curve object). */
export function bandQuadrature(curve: PassbandCurve): BandQuadrature {
  const cached = quadratureCache.get(curve);
  if (cached) return cached;
  validateCurve(curve);
  const w = curve.wavelengthAngstrom;
  const r = curve.response;
  const lam: number[] = [];
  const wt: number[] = [];
  for (let i = 0; i + 1 < w.length; i++) {
    const r0 = r[i];
    const r1 = r[i + 1];
    if (r0 === 0 && r1 === 0) continue;
    const w0 = w[i];
    const width = w[i + 1] - w0;
    const pieces = Math.max(1, Math.ceil(width / (MAX_PIECE_FRACTION * w0)));
    const h = width / pieces;
    for (let p = 0; p < pieces; p++) {
      const a = w0 + p * h;
      for (let g = 0; g < 3; g++) {
        const x = a + GL_T[g] * h;
        const resp = r0 + ((r1 - r0) * (x - w0)) / width;
        lam.push(x);
        wt.push(GL_W[g] * h * resp * conventionWeight(curve.convention, x));
      }
    }
  }
  let sum = 0;
  for (const v of wt) sum += v;
  const q: BandQuadrature = { wavelengthAngstrom: Float64Array.from(lam), weight: Float64Array.from(wt), weightSum: sum };
  quadratureCache.set(curve, q);
  return q;
}

/** Pivot wavelength in Å with the band's own convention. */
export function pivotWavelength(curve: PassbandCurve): number {
  const cached = pivotCache.get(curve);
  if (cached !== undefined) return cached;
  const q = bandQuadrature(curve);
  let inv2 = 0;
  for (let i = 0; i < q.weight.length; i++) {
    const l = q.wavelengthAngstrom[i];
    inv2 += q.weight[i] / (l * l);
  }
  const pivot = Math.sqrt(q.weightSum / inv2);
  pivotCache.set(curve, pivot);
  return pivot;
}

/** Band mean ⟨F_λ⟩ of a spectrum F_λ(λ in Å), in the spectrum's own F_λ unit. */
export function bandMeanFlambda(curve: PassbandCurve, flambda: (wavelengthAngstrom: number) => number): number {
  const q = bandQuadrature(curve);
  let num = 0;
  for (let i = 0; i < q.weight.length; i++) num += q.weight[i] * flambda(q.wavelengthAngstrom[i]);
  return num / q.weightSum;
}

/** ⟨F_ν⟩ in erg s⁻¹ cm⁻² Hz⁻¹ from ⟨F_λ⟩ in erg s⁻¹ cm⁻² Å⁻¹: ⟨F_ν⟩ = ⟨F_λ⟩ λ_p²/c. */
export function bandMeanFnuFromFlambda(flambdaCgs: number, pivotAngstrom: number): number {
  return (flambdaCgs * pivotAngstrom * pivotAngstrom) / SPEED_OF_LIGHT_ANGSTROM_S;
}

/**
 * ⟨ν⁻²⟩ = ∫R ν⁻² dν/ν / ∫R dν/ν (Hz⁻²) through a band's per-photon response R (R = S/λ for an
 * energy-type curve). Used by the WISE isophotal calibration (Jarrett et al. 2011; Wright et al. 2010).
 * Since dν/ν = dλ/λ and ν⁻² = λ²/c², this is ∫R λ dλ / (c² ∫R λ⁻¹ dλ) — i.e. λ_p²/c² — computed here
 * from the integrals themselves.
 */
export function meanInverseFrequencySquared(curve: PassbandCurve): number {
  const q = bandQuadrature(curve);
  // The quadrature weight is R·λ (photon) or S = R·λ (energy), so R dλ/λ = weight/λ².
  const cAngstrom = SPEED_OF_LIGHT_ANGSTROM_S;
  let num = 0;
  let den = 0;
  for (let i = 0; i < q.weight.length; i++) {
    const l = q.wavelengthAngstrom[i];
    const rOverLambda = q.weight[i] / (l * l);
    const nu = cAngstrom / l;
    num += rOverLambda / (nu * nu);
    den += rOverLambda;
  }
  return num / den;
}
