// The four flag codes only the photosphere fit raises, each produced on purpose with the committed
// model data (src/core/photosphere/photosphere-v1.json): class_assumed, feh_far, outside_calibration
// and band_uncalibrated, each beside a control star that does not raise it. The photometry is π B_λ(T)
// through the starter passbands (self-consistency): the flags depend on the star's class, [Fe/H],
// temperature and bands, not on how well a blackbody matches a photosphere.
import { describe, expect, it } from 'vitest';
import { requireBand, starterBandLibrary } from '../bands';
import { defaultPhotosphere } from '../photosphere';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { dilutionFromThetaMas } from './derived';
import { FLAG_EXPLANATIONS } from './flags';
import { fitStar, prepareFitModel, type FitFailure, type FitResult, type StarInput } from './fit-star';

const lib = starterBandLibrary();
const data = defaultPhotosphere();
// planckOnly is on by default; these fits go through the photosphere model.
const model = prepareFitModel(lib, { planckOnly: false });
const F99 = { law: 'f99' as const, rv: 3.1 };
// Bands the model calibrates for dwarfs (photosphere-v1.json classes.dwarf.bands).
const CALIBRATED = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2'];
// A sun-like dwarf at 20 pc with a parallax measured to 0.5 %: its class comes from the parallax.
const SUN_AT_20PC = { teffK: 5800, thetaMas: 0.465, parallaxMas: 50, parallaxErrMas: 0.25 };

function star(keys: string[], extra: Partial<StarInput> & { teffK?: number } = {}): StarInput {
  const { teffK = SUN_AT_20PC.teffK, ...rest } = extra;
  const bandFluxes: BandFlux[] = keys.map((k) => {
    const f = dilutionFromThetaMas(SUN_AT_20PC.thetaMas) * planckBandMean(requireBand(lib, k), teffK, 0, F99);
    return { bandKey: k, fluxCgs: f, errCgs: 0.02 * f, upperLimit: false };
  });
  return { id: 'star', bandFluxes, parallaxMas: SUN_AT_20PC.parallaxMas, parallaxErrMas: SUN_AT_20PC.parallaxErrMas, ...rest };
}

const ok = (r: FitResult | FitFailure): FitResult => {
  if (!r.ok) throw new Error(r.message);
  return r;
};

describe('photosphere flags', () => {
  it('the control star raises none of them: class from its parallax, solar [Fe/H], calibrated bands and range', () => {
    const r = ok(fitStar(model, star(CALIBRATED, { fehDex: 0 })));
    expect(r.photosphere).not.toBeNull();
    expect([r.lumClass, r.lumClassSource]).toEqual(['dwarf', 'parallax']);
    for (const code of ['class_assumed', 'feh_far', 'outside_calibration', 'band_uncalibrated'] as const) {
      expect(r.flags, code).not.toContain(code);
      expect(FLAG_EXPLANATIONS[code], code).toBeTruthy();
    }
  });

  it('class_assumed: no usable parallax (dwarf assumed), or the batch names the class', () => {
    const assumed = ok(fitStar(model, star(CALIBRATED, { parallaxMas: null, parallaxErrMas: null })));
    expect([assumed.lumClass, assumed.lumClassSource]).toEqual(['dwarf', 'assumed']);
    expect(assumed.flags).toContain('class_assumed');
    const byBatch = ok(fitStar(prepareFitModel(lib, { planckOnly: false, lumClass: 'dwarf' }), star(CALIBRATED)));
    expect(byBatch.lumClassSource).toBe('batch');
    expect(byBatch.flags).toContain('class_assumed');
    // The star's own class (input column lum_class) is not an assumption.
    const own = ok(fitStar(model, star(CALIBRATED, { parallaxMas: null, parallaxErrMas: null, lumClass: 'dwarf' })));
    expect(own.lumClassSource).toBe('input');
    expect(own.flags).not.toContain('class_assumed');
  });

  it(`feh_far: [Fe/H] more than ${data.fehLimitDex} dex from solar, either way`, () => {
    expect(ok(fitStar(model, star(CALIBRATED, { fehDex: data.fehLimitDex + 0.5 }))).flags).toContain('feh_far');
    expect(ok(fitStar(model, star(CALIBRATED, { fehDex: -(data.fehLimitDex + 0.5) }))).flags).toContain('feh_far');
    const near = ok(fitStar(model, star(CALIBRATED, { fehDex: data.fehLimitDex - 0.1 })));
    expect(near.flags).not.toContain('feh_far');
    expect(near.fehDex).toBeCloseTo(data.fehLimitDex - 0.1, 12);
  });

  it('outside_calibration: a temperature outside the class’s calibrated range', () => {
    const giant = data.classes.giant;
    // 7000 K is far above the giant calibration's top; read through the giant model on purpose.
    expect(7000).toBeGreaterThan(giant.teffMaxK);
    const hot = ok(fitStar(model, star(CALIBRATED, { teffK: 7000, lumClass: 'giant' })));
    expect(hot.lumClass).toBe('giant');
    expect(hot.teffK!).toBeGreaterThan(giant.teffMaxK);
    expect(hot.flags).toContain('outside_calibration');
    // A 4500 K giant sits inside the range.
    expect(4500).toBeGreaterThan(giant.teffMinK);
    expect(ok(fitStar(model, star(CALIBRATED, { teffK: 4500, lumClass: 'giant' }))).flags).not.toContain('outside_calibration');
  });

  it('band_uncalibrated: a band the model has no calibration for in this class (Johnson U for dwarfs)', () => {
    expect(data.classes.dwarf.bands.U).toBeUndefined();
    expect(ok(fitStar(model, star(['U', ...CALIBRATED]))).flags).toContain('band_uncalibrated');
  });
});
