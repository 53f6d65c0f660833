// The photosphere model under a later band library: a zero-point change shifts the correction (the
// calibrators' fluxes come from their magnitudes, so they move with it), a curve change leaves the
// band uncalibrated. Checked through the real fit: the same magnitudes give the same Teff after a
// zero-point change (self-consistency of the calibration, not a published value), and a changed
// curve raises band_uncalibrated. The 0.6 % Ks change is an invented example.
import { describe, expect, it } from 'vitest';
import { starterBandLibrary, type BandLibrary } from '../bands';
import { prepareFitModel, fitStar } from '../fit/fit-star';
import { measurementToBandFlux } from '../magnitude';
import type { Band } from '../types';
import { bandStanding, defaultPhotosphere, effectiveModelVersion, modelStanding } from './index';

const starter = starterBandLibrary();

function withBand(label: string, key: string, change: (b: Band) => Partial<Band>): BandLibrary {
  const b = starter.bands[key];
  return { ...starter, version: label, bands: { ...starter.bands, [key]: { ...b, ...change(b), version: b.version + 1 } } };
}
const scaledZeroPoint = (factor: number) => (b: Band): Partial<Band> => ({
  zeroPoint: { ...b.zeroPoint!, ...(b.zeroPoint!.fLambdaCgs !== undefined ? { fLambdaCgs: b.zeroPoint!.fLambdaCgs * factor } : { fnuJy: b.zeroPoint!.fnuJy! * factor }) },
});

// A K dwarf's magnitudes (rough values, from memory; only the comparison between libraries matters).
const MAGS: Record<string, number> = { V: 8.2, G: 7.9, BP: 8.4, RP: 7.3, J: 6.5, H: 6.0, Ks: 5.9, W1: 5.85, W2: 5.9 };
function fitWith(library: BandLibrary) {
  const model = prepareFitModel(library);
  const bandFluxes = Object.entries(MAGS).map(([bandKey, mag]) => measurementToBandFlux(library.bands[bandKey], { bandKey, mag, magErr: 0.02 }));
  const r = fitStar(model, { id: 'Hollowmere', bandFluxes, parallaxMas: 40, parallaxErrMas: 0.05 });
  if (!r.ok) throw new Error(r.reason);
  return r;
}

describe('the photosphere model under a changed band library', () => {
  const data = defaultPhotosphere();

  it('is as calibrated with the library it was built with', () => {
    expect(modelStanding(data, starter).every((s) => s.state === 'as-calibrated')).toBe(true);
    expect(effectiveModelVersion(data, starter)).toBe(data.version);
  });

  it('shifts a band by the log of the zero-point ratio and gives the same Teff from the same magnitudes, under a new model version', () => {
    const lib = withBand('v2', 'Ks', scaledZeroPoint(1.006));
    const s = bandStanding(data, lib, 'Ks');
    expect(s.state).toBe('zero-point-changed');
    expect(s.lnShift).toBeCloseTo(Math.log(1.006), 12);
    expect(effectiveModelVersion(data, lib)).toBe(`${data.version}+v2`);
    const before = fitWith(starter);
    const after = fitWith(lib);
    expect(after.photosphere?.version).toBe(`${data.version}+v2`);
    // Measured: identical to the last digit (4933.1186 K both); 1e-9 allows for rounding in the rebuilt grids.
    expect(Math.abs(after.teffK! / before.teffK! - 1)).toBeLessThan(1e-9);
    expect(after.flags).not.toContain('band_uncalibrated');
    // The Planck fit has no calibration to absorb the change: Ks's flux moved, so T_bb moves a little.
    expect(after.planck.teffK).not.toBe(before.planck.teffK);
  });

  it('leaves a band whose curve changed uncalibrated (flag band_uncalibrated), the others as they were', () => {
    const lib = withBand('v3', 'Ks', (b) => ({ response: b.response.map((r, i) => (i === b.response.length >> 1 ? r * 0.5 : r)) }));
    expect(bandStanding(data, lib, 'Ks').state).toBe('curve-changed');
    expect(bandStanding(data, lib, 'J').state).toBe('as-calibrated');
    const r = fitWith(lib);
    expect(r.flags).toContain('band_uncalibrated');
  });
});
