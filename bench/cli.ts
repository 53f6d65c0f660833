// Bench section "cli" (`npm run bench -- --only cli`): the whole `starkiln fit` command on a canonical
// wide CSV of 100 000 invented stars (8–12 bands each, bench/mock.ts), CSV in and out, as a pipeline
// runs it: a fresh process (TypeScript loading included), reading, mapping, fitting, writing with the
// provenance header. Issue 3 asks for "a few seconds". Speeds are measured here, never in tests.
// Options: --stars N (default 100000).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { requireBand, starterBandLibrary } from '../src/core/bands';
import { prepareFitModel } from '../src/core/fit';
import { flambdaCgsToMagnitude } from '../src/core/magnitude';
import { BENCH_BAND_POOL, mockCatalogue } from './mock';

const here = path.dirname(fileURLToPath(import.meta.url));
const args = process.argv.slice(2);
const at = args.indexOf('--stars');
const N = at >= 0 ? Number(args[at + 1]) : 100000;
/** σ_m = 2.5/ln 10 · σ_F/F (first-order propagation, common practice). */
const MAG_PER_LN = 2.5 / Math.LN10;

const lib = starterBandLibrary();
const model = prepareFitModel(lib);
const cat = mockCatalogue(model, N, 20240601, false);
const lines = [['id', 'parallax_mas', 'parallax_err_mas', ...BENCH_BAND_POOL.flatMap((k) => [k, `${k}_err`])].join(',')];
const col = new Map(BENCH_BAND_POOL.map((k, i) => [k, i]));
for (const s of cat.stars) {
  const cells = new Array<string>(2 * BENCH_BAND_POOL.length).fill('');
  for (const b of s.bandFluxes) {
    const i = col.get(b.bandKey) as number;
    cells[2 * i] = flambdaCgsToMagnitude(requireBand(lib, b.bandKey), b.fluxCgs).toFixed(5);
    cells[2 * i + 1] = ((MAG_PER_LN * b.errCgs) / b.fluxCgs).toFixed(5);
  }
  lines.push([s.id, String(s.parallaxMas), String(s.parallaxErrMas), ...cells].join(','));
}
const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-cli-'));
try {
  const input = path.join(dir, 'stars.csv');
  const output = path.join(dir, 'fitted.csv');
  writeFileSync(input, lines.join('\n') + '\n');
  console.log(`starkiln fit on ${N.toLocaleString('en-US')} invented stars, 8–12 of ${BENCH_BAND_POOL.length} bands each: input ${(statSync(input).size / 2 ** 20).toFixed(1)} MiB`);
  console.log(`machine: ${os.cpus()[0]?.model ?? 'cpu'} × ${os.availableParallelism()}, node ${process.version}, load average ${os.loadavg().map((x) => x.toFixed(2)).join(' ')}`);
  const runs: number[] = [];
  for (let r = 0; r < 3; r++) {
    const t0 = performance.now();
    const run = spawnSync(process.execPath, [path.join(here, '../bin/starkiln.mjs'), 'fit', input, '-o', output], { encoding: 'utf8' });
    const seconds = (performance.now() - t0) / 1000;
    if (run.status !== 0 || run.stdout !== '') {
      console.error(`starkiln fit exited with ${run.status}: ${run.stderr}`);
      process.exit(1);
    }
    runs.push(seconds);
    if (r === 0) console.log(`  ${run.stderr.trim().split('\n').pop()}`);
    console.log(`  run ${r + 1}: ${seconds.toFixed(2)} s wall (${Math.round(N / seconds).toLocaleString('en-US')} stars/s), output ${(statSync(output).size / 2 ** 20).toFixed(1)} MiB`);
  }
  console.log(`best of ${runs.length}: ${Math.min(...runs).toFixed(2)} s for the whole command (process start, read, map, fit, write)`);
  console.log(`load average at the end ${os.loadavg().map((x) => x.toFixed(2)).join(' ')} (other processes on this machine slow every figure above)`);
} finally {
  rmSync(dir, { recursive: true, force: true });
}
