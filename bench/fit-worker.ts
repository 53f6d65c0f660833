// One bench worker thread. Everything that is not fitting happens before the main thread starts its
// clock: the thread builds its own fit model and tables (tables are per thread, never shared), then fits
// its whole [start, end) slice once so the JIT has compiled the hot path and every table plane the slice
// needs exists. Then, for each "go", it fits the slice again from the shared packed input into the shared
// result columns and reports its own wall and CPU time for that round.
import { parentPort, workerData } from 'node:worker_threads';
import { starterBandLibrary } from '../src/core/bands';
import { prepareFitModel, type FitOptions } from '../src/core/fit';
import { fitPacked, type PackedResults, type PackedStars } from '../src/core/fit/batch';

interface Job {
  stars: PackedStars;
  results: PackedResults;
  options: Partial<FitOptions>;
  start: number;
  end: number;
  bandKeys: string[];
  warmRounds: number;
}

const job = workerData as Job;
const t0 = performance.now();
const model = prepareFitModel(starterBandLibrary(), job.options);
// Same band indices as the main thread's packing.
for (const key of job.bandKeys) model.tables.bandIndex(key);
model.tables.plane(0);
const prepareMs = performance.now() - t0;
const t1 = performance.now();
for (let r = 0; r < job.warmRounds; r++) fitPacked(model, job.stars, job.results, job.options, job.start, job.end);
const warmMs = performance.now() - t1;
parentPort!.postMessage({ ready: true, prepareMs, warmMs });
parentPort!.on('message', () => {
  // Wall time only: in Node 20 process.cpuUsage() inside a worker is the whole process's CPU time.
  const w0 = performance.now();
  fitPacked(model, job.stars, job.results, job.options, job.start, job.end);
  parentPort!.postMessage({ done: true, ms: performance.now() - w0 });
});
