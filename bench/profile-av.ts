// Profiling helper (not part of npm run bench): iteration counts and time of the A_V-fitted path.
import { starterBandLibrary } from '../src/core/bands';
import { prepareFitModel } from '../src/core/fit';
import { createPackedResults, fitPacked, packStars } from '../src/core/fit/batch';
import { BENCH_BAND_POOL, mockCatalogue } from './mock';
const model = prepareFitModel(starterBandLibrary(), { fitAv: true });
for (const k of BENCH_BAND_POOL) model.tables.bandIndex(k);
const red = mockCatalogue(model, 5000, 777, true);
const p = packStars(model, red.stars);
const out = createPackedResults(p.count);
fitPacked(model, p, out);
const e = model.engine as unknown as { chi2Full: (...a: number[]) => number; normalEquations: (x: number) => void };
let chi = 0, ne = 0;
const c = e.chi2Full.bind(e), n = e.normalEquations.bind(e);
e.chi2Full = (...a: number[]) => { chi++; return c(...a); };
e.normalEquations = (x: number) => { ne++; n(x); };
const t0 = performance.now();
fitPacked(model, p, out);
console.log('µs/star', ((performance.now() - t0) * 1000 / p.count).toFixed(1), 'chi2Full/star', (chi / p.count).toFixed(1), 'normalEq/star', (ne / p.count).toFixed(1));
