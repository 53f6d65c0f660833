// Profiling helper: cost of each stage of the A_V-fixed hot path (CPU time per star, best of 7).
import { starterBandLibrary } from '../src/core/bands';
import { prepareFitModel } from '../src/core/fit';
import { packStars, createPackedResults, fitPacked } from '../src/core/fit/batch';
import { engineSettings } from '../src/core/fit/fit-star';
import { mockCatalogue } from './mock';
const model = prepareFitModel(starterBandLibrary());
const cat = mockCatalogue(model, 50000, 1, false);
const p = packStars(model, cat.stars);
const out = createPackedResults(p.count);
// eslint-disable-next-line @typescript-eslint/no-explicit-any
const e = model.engine as any;
const settings = engineSettings(model.options);
function load(i: number) {
  e.begin();
  for (let k = p.offsets[i]; k < p.offsets[i + 1]; k++) e.add(p.bandIndex[k], p.fluxCgs[k], p.sigmaCgs[k], false, 0);
}
function time(name: string, f: () => void) {
  let best = Infinity;
  for (let r = 0; r < 7; r++) {
    const c0 = process.cpuUsage();
    f();
    const c = process.cpuUsage(c0);
    best = Math.min(best, ((c.user + c.system) / p.count) * 1000);
  }
  console.log(name.padEnd(24), best.toFixed(0), 'ns/star');
}
e.usePlanes(0);
const pl = e.planes[0];
time('load+partition', () => { for (let i = 0; i < p.count; i++) { load(i); e.partition(); } });
time('+coarse', () => { for (let i = 0; i < p.count; i++) { load(i); e.partition(); e.coarseSearch(pl); } });
time('+fineStart', () => { for (let i = 0; i < p.count; i++) { load(i); e.partition(); e.coarseSearch(pl); e.fineStart(pl, 8.6); } });
time('fitFixed', () => { for (let i = 0; i < p.count; i++) { load(i); e.partition(); e.fitFixed(0); } });
time('run', () => { for (let i = 0; i < p.count; i++) { load(i); e.run(settings, 0, 10, 0.1); } });
time('fitPacked', () => fitPacked(model, p, out));
{
  let calls = 0;
  const f = e.fineNode.bind(e);
  e.fineNode = (a: Float64Array, j: number) => { calls++; return f(a, j); };
  let pcalls = 0;
  const pf = e.profileAtFast.bind(e);
  e.profileAtFast = (u: number) => { pcalls++; return pf(u); };
  fitPacked(model, p, out);
  console.log('fineNode per star', calls / p.count, 'profileAtFast per star', pcalls / p.count);
}
