// Blackbody mock stars and the blackbody model error: these test the pure Planck fit (planckOnly; the
// photosphere fit on real stars is tested in scripts/photosphere/photosphere.test.ts).
// fitPacked (catalogue path over typed arrays) must give exactly what fitStar gives, star by star.
import { describe, expect, it } from 'vitest';
import { starterBandLibrary, requireBand } from '../bands';
import { planckBandMean } from '../photometry';
import type { BandFlux } from '../types';
import { prepareFitModel, fitStar, type StarInput } from './fit-star';
import { createPackedResults, fitPacked, packStars } from './batch';
import { dilutionFromThetaMas } from './derived';
import { FLAG_BITS, flagCodes } from './flags';
import { mulberry32, normalDeviate } from './random';

const lib = starterBandLibrary();
const POOL = ['U', 'B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W3'];

function star(rand: () => number, i: number): StarInput {
  const teffK = 3000 + 20000 * rand();
  const av = rand() < 0.5 ? 0 : 2 * rand();
  const s = dilutionFromThetaMas(0.1 + rand());
  const bandFluxes: BandFlux[] = [];
  for (const key of POOL) {
    if (rand() < 0.25) continue;
    const f = s * planckBandMean(requireBand(lib, key), teffK, av, { law: 'f99', rv: 3.1 });
    const upperLimit = rand() < 0.08;
    bandFluxes.push({ bandKey: key, fluxCgs: upperLimit ? 0.8 * f : f * (1 + 0.02 * normalDeviate(rand)), errCgs: 0.02 * f, upperLimit });
  }
  return { id: `S${i}`, bandFluxes, avMag: av, parallaxMas: rand() < 0.1 ? -1 : 5 * rand(), parallaxErrMas: 0.3 };
}

describe('fitPacked', () => {
  it('matches fitStar for every star (values, errors, flags, failures)', () => {
    const rand = mulberry32(3);
    const stars = Array.from({ length: 300 }, (_, i) => star(rand, i));
    for (const options of [{}, { clip: true }, { fitAv: true }]) {
      const model = prepareFitModel(lib, { ...options, planckOnly: true });
      const packed = packStars(model, stars);
      const out = createPackedResults(stars.length);
      fitPacked(model, packed, out);
      let compared = 0;
      stars.forEach((s, i) => {
        const r = fitStar(model, s);
        if (!r.ok) {
          expect(out.status[i]).not.toBe(0);
          return;
        }
        compared++;
        expect(out.status[i]).toBe(0);
        expect(flagCodes(out.flags[i])).toEqual(r.flags);
        if (r.teffK === null) {
          expect(out.teffK[i]).toBeNaN();
          expect(out.teffLowerK[i]).toBe(r.teffLowerK);
          expect(out.flags[i] & FLAG_BITS.temp_lower_bound).toBeTruthy();
          return;
        }
        expect(out.teffK[i]).toBe(r.teffK);
        expect(out.teffErrK[i]).toBe(r.teffErrK);
        expect(out.thetaMas[i]).toBe(r.thetaMas);
        expect(out.chi2[i]).toBe(r.chi2);
        expect(out.avMag[i]).toBe(r.avMag);
        expect(Number.isNaN(out.radiusRsun[i]) ? null : out.radiusRsun[i]).toBe(r.radiusRsun);
        expect(out.nBands[i]).toBe(r.nBands);
      });
      expect(compared).toBeGreaterThan(250);
    }
  });
});
