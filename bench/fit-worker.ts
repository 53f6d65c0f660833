// One bench worker thread: builds its own fit model (tables are per thread), waits for "go", fits its
// [start, end) slice of the shared packed catalogue into the shared result columns and reports its time.
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
}

const job = workerData as Job;
const model = prepareFitModel(starterBandLibrary(), job.options);
// Same band indices as the main thread's packing.
for (const key of job.bandKeys) model.tables.bandIndex(key);
// Warm up the JIT and the tables on the first stars of the slice (results overwritten below).
fitPacked(model, job.stars, job.results, job.options, job.start, Math.min(job.end, job.start + 2000));
parentPort!.postMessage({ ready: true });
parentPort!.on('message', () => {
  const t0 = performance.now();
  const c0 = process.cpuUsage();
  fitPacked(model, job.stars, job.results, job.options, job.start, job.end);
  const cpu = process.cpuUsage(c0);
  parentPort!.postMessage({ done: true, ms: performance.now() - t0, cpuMs: (cpu.user + cpu.system) / 1000 });
});
