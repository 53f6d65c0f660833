// A given distance and the Gaia DR3 parallax zero-point change R and L as the formulas say
// (docs/science.md §7: R/R☉ = θ[mas]/ϖ[mas] · au/(2R☉), L ∝ R²T⁴; src/core/fit/distance.ts), on a
// blackbody mock star (Planck only: the formulas, not the photosphere model, are under test).
// Distance intervals: the geometric distance of HIP 19849 in the benchmark table (r_med_geo,
// r_lo_geo, r_hi_geo of Bailer-Jones et al. 2021, as given in ../shared/data/benchmark).
import { describe, expect, it } from 'vitest';
import { requireBand, starterBandLibrary } from '../bands';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { fitStar, prepareFitModel, type FitResult } from './fit-star';
import { asymmetricIntervals, resolveDistance } from './distance';
import { dilutionFromThetaMas } from './derived';

const lib = starterBandLibrary();
const model = prepareFitModel(lib, { planckOnly: true });

/** A 5200 K blackbody of θ = 1 mas through G BP RP J H Ks with 1 % errors (noise-free). */
function bands(): BandFlux[] {
  const s = dilutionFromThetaMas(1);
  return ['G', 'BP', 'RP', 'J', 'H', 'Ks'].map((k) => {
    const f = s * planckBandMean(requireBand(lib, k), 5200, 0, { law: 'f99', rv: 3.1 });
    return { bandKey: k, fluxCgs: f, errCgs: 0.01 * f, upperLimit: false };
  });
}

function ok(r: ReturnType<typeof fitStar>): FitResult {
  if (!r.ok) throw new Error(r.message);
  return r;
}

describe('distance used for R and L', () => {
  it('a Gaia DR3 parallax gets ϖ − Z with Z = −0.017 mas (Lindegren et al. 2021, from memory); Hipparcos and unknown origins do not', () => {
    const plx = 2.0;
    const gaia = ok(fitStar(model, { id: 'kiln-g', bandFluxes: bands(), parallaxMas: plx, parallaxErrMas: 0.02, parallaxOrigin: 'gaia_dr3' }));
    const hip = ok(fitStar(model, { id: 'kiln-h', bandFluxes: bands(), parallaxMas: plx, parallaxErrMas: 0.02, parallaxOrigin: 'hipparcos' }));
    const other = ok(fitStar(model, { id: 'kiln-o', bandFluxes: bands(), parallaxMas: plx, parallaxErrMas: 0.02 }));
    expect(gaia.distance).toMatchObject({ source: 'gaia_dr3_parallax', parallaxMas: 2.017, zeroPointMas: -0.017 });
    expect(gaia.distance!.pc).toBeCloseTo(1000 / 2.017, 9);
    expect(hip.distance).toMatchObject({ source: 'hipparcos_parallax', parallaxMas: 2, zeroPointMas: null });
    expect(other.distance!.source).toBe('parallax');
    // R ∝ 1/ϖ, L ∝ 1/ϖ² at fixed θ and T.
    expect(gaia.radiusRsun! / hip.radiusRsun!).toBeCloseTo(2 / 2.017, 10);
    expect(gaia.lumLsun! / hip.lumLsun!).toBeCloseTo((2 / 2.017) ** 2, 10);
    expect(hip.radiusRsun).toBeCloseTo(other.radiusRsun!, 12);
    // R/R☉ = 107.516 θ/ϖ (IAU 2015 B3 R☉, IAU 2012 B2 au).
    expect(hip.radiusRsun! / ((107.516 * hip.thetaMas!) / 2)).toBeCloseTo(1, 5);
    // The zero-point can be switched off per batch (0) or changed.
    const none = ok(fitStar(model, { id: 'kiln-g0', bandFluxes: bands(), parallaxMas: plx, parallaxErrMas: 0.02, parallaxOrigin: 'gaia_dr3' }, { gaiaParallaxZeroPointMas: 0 }));
    expect(none.radiusRsun).toBeCloseTo(hip.radiusRsun!, 12);
    expect(none.distance!.zeroPointMas).toBeNull();
  });

  it('a given distance is used instead of 1/ϖ, never with the zero-point; R and L intervals come from its ends', () => {
    // HIP 19849: r_med_geo 5.0092463, r_lo_geo 5.0060306, r_hi_geo 5.012345 pc (benchmark table).
    const d = 5.0092463;
    const lo = 5.0060306;
    const hi = 5.012345;
    const r = ok(fitStar(model, { id: 'kiln-d', bandFluxes: bands(), parallaxMas: 199.608, parallaxErrMas: 0.12, parallaxOrigin: 'gaia_dr3', distancePc: d, distanceLoPc: lo, distanceHiPc: hi }));
    expect(r.distance).toEqual({ pc: d, loPc: lo, hiPc: hi, source: 'input_distance', parallaxMas: null, zeroPointMas: null });
    // R = 107.516 θ d / 1000 (ϖ = 1000/d mas).
    expect(r.radiusRsun! / ((107.516 * r.thetaMas! * d) / 1000)).toBeCloseTo(1, 5);
    const sTheta = r.thetaErrMas! / r.thetaMas!;
    expect(r.radiusIntervalRsun!.lo! / r.radiusRsun!).toBeCloseTo(Math.exp(-Math.hypot(sTheta, Math.log(d / lo))), 12);
    expect(r.radiusIntervalRsun!.hi! / r.radiusRsun!).toBeCloseTo(Math.exp(Math.hypot(sTheta, Math.log(hi / d))), 12);
    const sF = r.fbolErrCgs! / r.fbolCgs!;
    expect(r.lumIntervalLsun!.lo! / r.lumLsun!).toBeCloseTo(Math.exp(-Math.hypot(sF, 2 * Math.log(d / lo))), 12);
  });

  it('a weak parallax (ϖ/σ = 3) gives intervals from 1000/(ϖ ± σ): asymmetric, the upper side twice the lower in distance', () => {
    const u = resolveDistance({ parallaxMas: 3, parallaxErrMas: 1, parallaxOrigin: 'hipparcos' }, -0.017);
    expect(u.used).toMatchObject({ pc: 1000 / 3, loPc: 250, hiPc: 500 });
    const iv = asymmetricIntervals(u.used!, 10, 100, 0, 0);
    expect(iv.radiusRsun.lo).toBeCloseTo(7.5, 12); // 10 · 250/(1000/3)
    expect(iv.radiusRsun.hi).toBeCloseTo(15, 12); // 10 · 500/(1000/3)
    expect(iv.lumLsun.hi).toBeCloseTo(225, 10); // 100 · 1.5²
    // σ ≥ ϖ: no upper end.
    expect(resolveDistance({ parallaxMas: 1, parallaxErrMas: 1.5 }, 0).used!.hiPc).toBeNull();
    const f = ok(fitStar(model, { id: 'kiln-w', bandFluxes: bands(), parallaxMas: 3, parallaxErrMas: 1 }));
    expect(f.flags).toContain('plx_weak');
    expect(f.radiusIntervalRsun!.hi! / f.radiusRsun! - 1).toBeGreaterThan(1 - f.radiusIntervalRsun!.lo! / f.radiusRsun! + 0.2);
  });

  it("values the input rules left out are listed first among the excluded bands, with their reason; RUWE's flag is carried", () => {
    const r = ok(
      fitStar(model, {
        id: 'kiln-x',
        bandFluxes: bands(),
        possibleCompanion: true,
        leftOut: [{ bandKey: 'W1', reason: 'saturated', detail: 'W1 6.229 is brighter than the bright limit 8.1 mag' }],
      }),
    );
    expect(r.excluded[0]).toEqual({ band: 'W1', reason: 'saturated', detail: 'W1 6.229 is brighter than the bright limit 8.1 mag' });
    expect(r.flags).toContain('possible_companion');
    expect(r.bandsUsed).not.toContain('W1');
  });
});
