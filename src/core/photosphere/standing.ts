// How the committed photosphere model applies to the bands of a given band library. The model was
// calibrated with one band library (its bandLibraryVersion and bandVersions); a later library can
// change a band in two ways:
//  - its zero-point only (same curve, system and convention): the calibrators' fluxes, made from
//    their magnitudes, move by the ratio of the magnitude-0 fluxes, so ln c_b moves by the log of
//    that ratio, exactly for calibrators measured in that band (decision 0026). The model is then a
//    new version, named after the model and the library (e.g. "kp-1+v3"), recorded with each fit.
//  - its curve (or system, convention): the correction no longer describes the band; the band is
//    uncalibrated (the Planck value, the assumed scatter, flag band_uncalibrated) until the model is
//    rebuilt by scripts/photosphere/build.ts as a new version.
import { starterBandLibrary, type BandLibrary } from '../bands';
import { zeroMagnitudeFlambdaCgs } from '../magnitude';
import type { Band } from '../types';
import type { PhotosphereData } from './model';

export type BandStanding =
  | { key: string; state: 'as-calibrated'; lnShift: 0 }
  | { key: string; state: 'zero-point-changed'; lnShift: number }
  | { key: string; state: 'curve-changed' | 'not-in-library' | 'not-calibrated'; lnShift: 0 };

/** The band definitions the model was calibrated with (the starter library's, when it was built with it). */
function calibratedBand(data: PhotosphereData, key: string): Band | undefined {
  const starter = starterBandLibrary();
  if (data.bandLibraryVersion !== starter.version) return undefined;
  const b = starter.bands[key];
  return b && b.version === data.bandVersions[key] ? b : undefined;
}

function sameNumbers(a: readonly number[], b: readonly number[]): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

function sameCurve(a: Band, b: Band): boolean {
  return a.system === b.system && a.magnitudeSystem === b.magnitudeSystem && a.convention === b.convention && sameNumbers(a.wavelengthAngstrom, b.wavelengthAngstrom) && sameNumbers(a.response, b.response);
}

/** The standing of one band of `library` under the model. */
export function bandStanding(data: PhotosphereData, library: BandLibrary, key: string): BandStanding {
  if (!(key in data.bandVersions)) return { key, state: 'not-calibrated', lnShift: 0 };
  const band = library.bands[key];
  if (!band) return { key, state: 'not-in-library', lnShift: 0 };
  if (band.version === data.bandVersions[key]) return { key, state: 'as-calibrated', lnShift: 0 };
  const ref = calibratedBand(data, key);
  if (!ref || !sameCurve(band, ref) || !band.zeroPoint || !ref.zeroPoint) return { key, state: 'curve-changed', lnShift: 0 };
  const lnShift = Math.log(zeroMagnitudeFlambdaCgs(band) / zeroMagnitudeFlambdaCgs(ref));
  return lnShift === 0 ? { key, state: 'as-calibrated', lnShift: 0 } : { key, state: 'zero-point-changed', lnShift };
}

/** Every calibrated band's standing, in the model's band order. */
export function modelStanding(data: PhotosphereData, library: BandLibrary): BandStanding[] {
  return Object.keys(data.bandVersions).map((key) => bandStanding(data, library, key));
}

/**
 * The model version a fit with this library uses: the model's own when every band is as it was
 * calibrated, else the model's followed by the library's ("kp-1+v3"), since the corrections differ.
 */
export function effectiveModelVersion(data: PhotosphereData, library: BandLibrary): string {
  const changed = modelStanding(data, library).some((s) => s.state !== 'as-calibrated');
  return changed ? `${data.version}+${library.version}` : data.version;
}
