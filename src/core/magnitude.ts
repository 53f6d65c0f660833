// Magnitudes and fluxes → band-mean F_λ, the quantity the fit compares with the model.
//   Vega-type band quoted in F_λ:  ⟨F_λ⟩ = F_λ,0 · 10^(−0.4 m)
//   AB band:                        ⟨F_ν⟩ = 3631 Jy · 10^(−0.4 m) (Oke & Gunn 1983), ⟨F_λ⟩ = ⟨F_ν⟩ c/λ_p²
//   WISE isophotal (Jarrett et al. 2011; Wright et al. 2010):
//                                   ⟨F_ν⟩ = 10^(−0.4 m) · F_ν,0 · ν_iso² · ⟨ν⁻²⟩
//   flux given in Jy (any band):    ⟨F_λ⟩ = ⟨F_ν⟩ c/λ_p²
//   σ_F/F = 0.4 ln10 · σ_m (first-order propagation of m = −2.5 log10 F + const).
// Catalogue offsets (SDSS u/z, Gaia Vega→AB) are added to the magnitude before the conversion.
import { JY_TO_CGS, SPEED_OF_LIGHT_ANGSTROM_S } from './constants';
import { meanInverseFrequencySquared, pivotWavelength } from './passband';
import type { Band, BandFlux, Measurement } from './types';

/** 0.4 ln 10: d(ln F)/dm. */
export const MAG_TO_LN_FLUX = 0.4 * Math.LN10;

export interface ConversionOptions {
  /** Add the zero-point's relative uncertainty in quadrature (default false: the floor usually covers it). */
  includeZeroPointError?: boolean;
}

function requireZeroPoint(band: Band) {
  if (!band.zeroPoint) {
    throw new Error(`band ${band.key} has no zero-point yet; give its flux in Jy (${band.key}_jy)`);
  }
  return band.zeroPoint;
}

// A band object's zero-point never changes in place (a change makes a new band-library version),
// so the magnitude-0 flux is computed once per band object.
const zeroMagnitudeCache = new WeakMap<Band, number>();

/** Band-mean ⟨F_λ⟩ (erg s⁻¹ cm⁻² Å⁻¹) of a magnitude 0 object in this band, after the catalogue offset. */
export function zeroMagnitudeFlambdaCgs(band: Band): number {
  const cached = zeroMagnitudeCache.get(band);
  if (cached !== undefined) return cached;
  const value = computeZeroMagnitudeFlambdaCgs(band);
  zeroMagnitudeCache.set(band, value);
  return value;
}

function computeZeroMagnitudeFlambdaCgs(band: Band): number {
  const zp = requireZeroPoint(band);
  const offset = zp.catalogueOffsetMag ?? 0;
  const offsetFactor = Math.pow(10, -0.4 * offset);
  if (zp.fLambdaCgs !== undefined) {
    if (zp.fnuJy !== undefined) throw new Error(`band ${band.key}: zero-point gives both F_λ and F_ν; keep one`);
    return zp.fLambdaCgs * offsetFactor;
  }
  if (zp.fnuJy === undefined) throw new Error(`band ${band.key}: zero-point has neither F_λ nor F_ν`);
  if (band.magnitudeSystem === 'ab' && zp.fnuJy !== 3631) {
    throw new Error(`band ${band.key}: an AB zero-point must be 3631 Jy, got ${zp.fnuJy}`);
  }
  const pivot = pivotWavelength(band);
  let fnuCgs = zp.fnuJy * JY_TO_CGS;
  if (zp.isophotalWavelengthAngstrom !== undefined) {
    // F_ν,0 is quoted at λ_iso for an F_ν ∝ ν⁻² spectrum; scale to the photon-weighted band mean.
    const nuIso = SPEED_OF_LIGHT_ANGSTROM_S / zp.isophotalWavelengthAngstrom;
    fnuCgs *= nuIso * nuIso * meanInverseFrequencySquared(band);
  }
  return (fnuCgs * offsetFactor * SPEED_OF_LIGHT_ANGSTROM_S) / (pivot * pivot);
}

/** ⟨F_λ⟩ (erg s⁻¹ cm⁻² Å⁻¹) for a catalogue magnitude in the band's default system. */
export function magnitudeToFlambdaCgs(band: Band, mag: number): number {
  return zeroMagnitudeFlambdaCgs(band) * Math.pow(10, -0.4 * mag);
}

/** Catalogue magnitude in the band's default system for a band-mean ⟨F_λ⟩ (inverse of magnitudeToFlambdaCgs). */
export function flambdaCgsToMagnitude(band: Band, flambdaCgs: number): number {
  return -2.5 * Math.log10(flambdaCgs / zeroMagnitudeFlambdaCgs(band));
}

/** ⟨F_λ⟩ (erg s⁻¹ cm⁻² Å⁻¹) for a band-mean ⟨F_ν⟩ in Jy, through the band's pivot wavelength. */
export function fnuJyToBandFlambdaCgs(band: Band, fnuJy: number): number {
  const pivot = pivotWavelength(band);
  return (fnuJy * JY_TO_CGS * SPEED_OF_LIGHT_ANGSTROM_S) / (pivot * pivot);
}

/** Band-mean ⟨F_ν⟩ in Jy for a band-mean ⟨F_λ⟩ in erg s⁻¹ cm⁻² Å⁻¹. */
export function bandFlambdaCgsToFnuJy(band: Band, flambdaCgs: number): number {
  const pivot = pivotWavelength(band);
  return (flambdaCgs * pivot * pivot) / SPEED_OF_LIGHT_ANGSTROM_S / JY_TO_CGS;
}

function finite(band: Band, what: string, v: number | undefined): v is number {
  if (v === undefined || v === null) return false;
  if (typeof v !== 'number' || !Number.isFinite(v)) throw new Error(`band ${band.key}: ${what} is not a finite number (${String(v)})`);
  return true;
}

/**
 * Converts one measurement to a band flux (⟨F_λ⟩ and its 1σ in erg s⁻¹ cm⁻² Å⁻¹, before any floor).
 * Throws a clear error for a band without a zero-point given a magnitude, for a detection without
 * an uncertainty, and for measurements that give both or neither of magnitude and flux.
 */
export function measurementToBandFlux(band: Band, m: Measurement, options: ConversionOptions = {}): BandFlux {
  if (m.bandKey !== band.key) throw new Error(`measurement for band ${m.bandKey} given to band ${band.key}`);
  const upperLimit = m.upperLimit === true;
  const hasMag = finite(band, 'magnitude', m.mag);
  const hasJy = finite(band, 'flux in Jy', m.fnuJy);
  if (hasMag && hasJy) throw new Error(`band ${band.key}: give either a magnitude or a flux in Jy, not both`);
  if (!hasMag && !hasJy) throw new Error(`band ${band.key}: no magnitude and no flux given`);

  if (hasMag) {
    const flux = magnitudeToFlambdaCgs(band, m.mag as number);
    const hasErr = finite(band, 'magnitude uncertainty', m.magErr);
    if (!hasErr && !upperLimit) throw new Error(`band ${band.key}: magnitude ${m.mag} has no uncertainty (${band.key}_err)`);
    const magErr = hasErr ? (m.magErr as number) : 0;
    if (magErr < 0) throw new Error(`band ${band.key}: magnitude uncertainty ${magErr} is negative`);
    let rel = MAG_TO_LN_FLUX * magErr;
    if (options.includeZeroPointError && band.zeroPoint) {
      rel = Math.hypot(rel, band.zeroPoint.relErr);
    }
    return { bandKey: band.key, fluxCgs: flux, errCgs: rel * flux, upperLimit };
  }

  const fnuJy = m.fnuJy as number;
  const hasErr = finite(band, 'flux uncertainty in Jy', m.fnuErrJy);
  if (!hasErr && !upperLimit) throw new Error(`band ${band.key}: flux ${fnuJy} Jy has no uncertainty (${band.key}_jy_err)`);
  const errJy = hasErr ? (m.fnuErrJy as number) : 0;
  if (errJy < 0) throw new Error(`band ${band.key}: flux uncertainty ${errJy} Jy is negative`);
  return {
    bandKey: band.key,
    fluxCgs: fnuJyToBandFlambdaCgs(band, fnuJy),
    errCgs: fnuJyToBandFlambdaCgs(band, errJy),
    upperLimit,
  };
}

/**
 * Adds a systematic floor, a fraction of the flux, in quadrature to the uncertainty
 * (docs/science.md 6: default 0.02; 0 leaves the error unchanged).
 */
export function applyFloor(flux: BandFlux, floorFraction = 0.02): BandFlux {
  if (!(Number.isFinite(floorFraction) && floorFraction >= 0)) {
    throw new Error(`systematic floor must be a fraction ≥ 0, got ${floorFraction}`);
  }
  if (floorFraction === 0) return { ...flux };
  return { ...flux, errCgs: Math.hypot(flux.errCgs, floorFraction * Math.abs(flux.fluxCgs)) };
}
