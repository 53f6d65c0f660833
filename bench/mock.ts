// Mock catalogues for `npm run bench`: invented stars, 8–12 bands each from a pool of 18, Gaussian noise
// with a fixed seed. Band means come from the fit's tables (interpolation < 1e-5 of the direct integral,
// tested in src/core/fit/grid.interpolation.test.ts): the bench measures speed, and computing 10⁶ band
// integrals directly would dominate its run time.
import type { FitModel, StarInput } from '../src/core/fit';
import { dilutionFromThetaMas } from '../src/core/fit/derived';
import { lnPhiAt } from '../src/core/fit/grid';
import { mulberry32, normalDeviate } from '../src/core/fit/random';

export const BENCH_BAND_POOL = ['U', 'B', 'V', 'R', 'I', 'u', 'g', 'r', 'i', 'z', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2'];

export interface MockCatalogue {
  stars: StarInput[];
  teffK: Float64Array;
  thetaMas: Float64Array;
  avMag: Float64Array;
}

export function mockCatalogue(model: FitModel, count: number, seed: number, reddened: boolean): MockCatalogue {
  const rand = mulberry32(seed);
  const idx = BENCH_BAND_POOL.map((k) => model.tables.bandIndex(k));
  const stars: StarInput[] = new Array(count);
  const teffK = new Float64Array(count);
  const thetaMas = new Float64Array(count);
  const avMag = new Float64Array(count);
  const order = BENCH_BAND_POOL.map((_, i) => i);
  for (let n = 0; n < count; n++) {
    const t = Math.exp(Math.log(3000) + rand() * Math.log(30000 / 3000));
    const theta = Math.exp(Math.log(0.01) + rand() * Math.log(200));
    const av = reddened ? 3 * rand() : 0;
    const s = dilutionFromThetaMas(theta);
    const nb = 8 + Math.floor(rand() * 5);
    for (let i = order.length - 1; i > 0; i--) {
      const j = Math.floor(rand() * (i + 1));
      const tmp = order[i];
      order[i] = order[j];
      order[j] = tmp;
    }
    const bandFluxes = [];
    for (let q = 0; q < nb; q++) {
      const b = order[q];
      const f = s * Math.exp(lnPhiAt(model.tables, idx[b], Math.log(t), av));
      const rel = 0.01 + 0.04 * rand();
      bandFluxes.push({ bandKey: BENCH_BAND_POOL[b], fluxCgs: f * (1 + rel * normalDeviate(rand)), errCgs: rel * f, upperLimit: false });
    }
    const plx = 1 + 49 * rand();
    stars[n] = { id: `KST-${n}`, bandFluxes, parallaxMas: plx, parallaxErrMas: 0.02 * plx, avMag: reddened ? av : undefined };
    teffK[n] = t;
    thetaMas[n] = theta;
    avMag[n] = av;
  }
  return { stars, teffK, thetaMas, avMag };
}
