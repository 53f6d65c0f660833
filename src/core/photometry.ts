// Synthetic photometry of a reddened blackbody: the model the fit compares with band fluxes.
//   φ(T, A_V) = ⟨π B_λ(T) · 10^(−0.4 A_V k(λ))⟩_band   with k = A_λ/A_V of the chosen law,
// so a star of dilution s = (R/d)² = (θ/2)² has ⟨F_λ⟩ = s · φ (docs/science.md 1, 2, 4).
// The band quadrature (passband.ts) is reused, with π·2hc²/λ⁵ and hc/λk precomputed per node and
// the extinction curve cached per law and R_V, because the fit's table builder calls this a lot.
import { bandQuadrature, pivotWavelength, type PassbandCurve } from './passband';
import { C1_CGS_ANGSTROM, C2_ANGSTROM_K } from './planck';
import { extinctionFunction } from './extinction';
import type { ExtinctionSpec } from './types';

export {
  applyFloor,
  measurementToBandFlux,
  magnitudeToFlambdaCgs,
  flambdaCgsToMagnitude,
  fnuJyToBandFlambdaCgs,
  bandFlambdaCgsToFnuJy,
  zeroMagnitudeFlambdaCgs,
  MAG_TO_LN_FLUX,
} from './magnitude';
export { bandMeanFlambda, bandMeanFnuFromFlambda, pivotWavelength, meanInverseFrequencySquared } from './passband';

const MAX_EXPONENT = 709;
const LN10_04 = 0.4 * Math.LN10;

interface PlanckNodes {
  /** π · 2hc² / λ⁵ (cgs per Å) times the quadrature weight. */
  c1w: Float64Array;
  /** hc / (λ k) in K. */
  c2l: Float64Array;
  weightSum: number;
  /** A_λ/A_V at each node, per `${law}:${rv}`. */
  extinction: Map<string, Float64Array>;
}

const planckCache = new WeakMap<object, PlanckNodes>();

function planckNodes(band: PassbandCurve): PlanckNodes {
  let p = planckCache.get(band);
  if (p) return p;
  const q = bandQuadrature(band);
  const n = q.weight.length;
  const c1w = new Float64Array(n);
  const c2l = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const l = q.wavelengthAngstrom[i];
    const l2 = l * l;
    c1w[i] = (q.weight[i] * Math.PI * C1_CGS_ANGSTROM) / (l2 * l2 * l);
    c2l[i] = C2_ANGSTROM_K / l;
  }
  p = { c1w, c2l, weightSum: q.weightSum, extinction: new Map() };
  planckCache.set(band, p);
  return p;
}

function extinctionNodes(band: PassbandCurve, p: PlanckNodes, ext: ExtinctionSpec): Float64Array {
  const key = `${ext.law}:${ext.rv}`;
  let k = p.extinction.get(key);
  if (!k) {
    const f = extinctionFunction(ext);
    const lam = bandQuadrature(band).wavelengthAngstrom;
    k = new Float64Array(lam.length);
    for (let i = 0; i < lam.length; i++) k[i] = f(lam[i]);
    if (p.extinction.size > 32) p.extinction.clear();
    p.extinction.set(key, k);
  }
  return k;
}

/**
 * Band-mean ⟨F_λ⟩ in erg s⁻¹ cm⁻² Å⁻¹ of π B_λ(T) · 10^(−0.4 A_V k(λ)) through the band, i.e. the
 * flux of a blackbody of temperature teffK for dilution s = 1, reddened by avMag with the given law.
 * The band's convention (photon or energy) sets the weighting.
 */
export function planckBandMean(band: PassbandCurve, teffK: number, avMag: number, ext: ExtinctionSpec): number {
  if (!(Number.isFinite(teffK) && teffK > 0)) throw new Error(`temperature must be a positive number of kelvin, got ${teffK}`);
  if (!Number.isFinite(avMag)) throw new Error(`A_V must be a finite number of magnitudes, got ${avMag}`);
  const p = planckNodes(band);
  const { c1w, c2l } = p;
  const n = c1w.length;
  const invT = 1 / teffK;
  let num = 0;
  if (avMag === 0) {
    for (let i = 0; i < n; i++) {
      const x = c2l[i] * invT;
      if (x < MAX_EXPONENT) num += c1w[i] / Math.expm1(x);
    }
  } else {
    const k = extinctionNodes(band, p, ext);
    const a = -LN10_04 * avMag;
    for (let i = 0; i < n; i++) {
      const x = c2l[i] * invT;
      if (x < MAX_EXPONENT) num += (c1w[i] / Math.expm1(x)) * Math.exp(a * k[i]);
    }
  }
  return num / p.weightSum;
}

/**
 * PREVIEW ONLY — never for a fit or a catalogue value. π B_λ(T) · 10^(−0.4 A_V k) evaluated at the
 * band's pivot wavelength alone. Cheap for a quick plot, but it differs from the band integral by
 * far more than the fit's tolerance for broad bands (docs/science.md 2: 0.5–6 % in Teff).
 */
export function previewPlanckAtPivot(band: PassbandCurve, teffK: number, avMag: number, ext: ExtinctionSpec): number {
  const lp = pivotWavelength(band);
  const x = C2_ANGSTROM_K / (lp * teffK);
  if (!(x < MAX_EXPONENT)) return 0;
  const l2 = lp * lp;
  const bb = (Math.PI * C1_CGS_ANGSTROM) / (l2 * l2 * lp) / Math.expm1(x);
  return avMag === 0 ? bb : bb * Math.pow(10, -0.4 * avMag * extinctionFunction(ext)(lp));
}
