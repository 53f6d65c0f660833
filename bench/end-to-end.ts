// Bench section "end-to-end" (or `npx tsx bench/end-to-end.ts [--stars N] [--workers W]`): the whole path
// for a large campaign — a canonical wide CSV of invented stars uploaded and imported through the
// intake (src/server/intake), a batch started, and W real worker processes (`workers/index.ts
// --drain`) fitting every star into fit_results. Reports stars per second per stage and end to end,
// and the peak resident memory (VmHWM) of each worker. Speeds are measured here, never in tests.
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { requireBand, starterBandLibrary } from '../src/core/bands';
import { dilutionFromThetaMas } from '../src/core/fit/derived';
import { mulberry32 } from '../src/core/fit/random';
import { flambdaCgsToMagnitude, planckBandMean } from '../src/core/photometry';
import { openDatabase } from '../src/db/client';
import { migrateDatabase } from '../src/db/migrate';
import { createApp } from '../src/app/app';
import { parseEnv } from '../src/adapters/env';
import { startBatch } from '../src/server/batches';
import { createUpload, getUpload, importUpload, type ImportSummary } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { peakRssMb } from '../tests/support/probes';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);
const argValue = (name: string) => {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
};
const N = Number(argValue('--stars') ?? 100_000);
const WORKERS = Number(argValue('--workers') ?? 2);
const BANDS = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks'];

/** Invented stars (KST-…), magnitudes from a blackbody integrated through each passband, 0.02 mag errors with noise. */
function mockCsv(count: number): string {
  const lib = starterBandLibrary();
  const bands = BANDS.map((k) => requireBand(lib, k));
  const rand = mulberry32(2024);
  const lines = [['id', 'parallax_mas', 'parallax_err_mas', ...BANDS.flatMap((b) => [b, `${b}_err`])].join(',')];
  for (let n = 0; n < count; n++) {
    const teffK = 3500 + 6500 * rand();
    const s = dilutionFromThetaMas(0.05 + 0.95 * rand());
    const plx = 1 + 30 * rand();
    const cells = [`KST-${String(n + 1).padStart(6, '0')}`, plx.toFixed(4), (0.02 * plx).toFixed(4)];
    for (const band of bands) {
      const mag = flambdaCgsToMagnitude(band, s * planckBandMean(band, teffK, 0, { law: 'f99', rv: 3.1 }));
      cells.push((mag + 0.02 * (rand() + rand() + rand() - 1.5)).toFixed(4), '0.0200');
    }
    lines.push(cells.join(','));
  }
  return lines.join('\n') + '\n';
}

async function main() {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-e2e-'));
  const databasePath = path.join(dir, 'bench.db');
  const env = { DATABASE_PATH: databasePath, BETTER_AUTH_SECRET: 'bench-secret-bench-secret-bench-secret-01', MAIL_TRANSPORT: 'outbox' };
  try {
    const opened = openDatabase(databasePath);
    migrateDatabase(opened.db);
    const app = createApp(opened.db, parseEnv(env));
    const analyst = await makeUser(app);
    const campaign = makeCampaign(app, analyst, { name: 'Kestrel wide-field bench' });

    const t = performance.now();
    const csv = mockCsv(N);
    console.log(`end-to-end: ${N.toLocaleString('en')} invented stars × ${BANDS.length} bands as a wide CSV (${(csv.length / 1e6).toFixed(1)} MB) made in ${((performance.now() - t) / 1000).toFixed(1)} s (not timed below)`);

    const t0 = performance.now();
    const form = new FormData();
    form.append('file', new Blob([csv], { type: 'text/csv' }), 'kestrel-wide.csv');
    const received = await createUpload(app, analyst, campaign.id, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), { dataDir: dir, maxBytes: 1024 * 1024 * 1024 });
    // The intake jobs (read, then import) run inline here; `--only intake` measures them in the web server.
    await drainIntakeJobs(opened.db);
    const upload = getUpload(opened.db, campaign.id, received.id);
    const importJob = importUpload(app, analyst, campaign.id, upload.id, { mapping: { layout: upload.detected!.layout, columns: upload.detected!.columns }, rules: upload.detected!.rules });
    await drainIntakeJobs(opened.db);
    const imported = outcomeOf(opened.db, importJob.id).import as ImportSummary;
    const tImport = performance.now();
    const importRssMb = process.memoryUsage().rss / 2 ** 20;

    const batch = startBatch(app, analyst, campaign.id, {});
    const tStart = performance.now();
    const jobCount = opened.sqlite.prepare('SELECT count(*) FROM jobs WHERE batch_id = ?').pluck().get(batch.id) as number;

    const workers = Array.from({ length: WORKERS }, (_, i) =>
      spawn(process.execPath, ['--import', 'tsx', path.join(root, 'workers/index.ts'), '--id', `bench-${i + 1}`, '--drain', '--quiet', '--idle-ms', '50'], {
        cwd: root,
        env: { ...process.env, ...env },
        stdio: ['ignore', 'inherit', 'inherit'],
      }),
    );
    const peaks = workers.map(() => 0);
    const poll = setInterval(() => workers.forEach((w, i) => (peaks[i] = Math.max(peaks[i], peakRssMb(w.pid!) ?? 0))), 100);
    const codes = await Promise.all(workers.map((w) => new Promise<number | null>((resolve) => w.on('exit', (code) => resolve(code)))));
    clearInterval(poll);
    const tEnd = performance.now();

    const results = opened.sqlite.prepare('SELECT count(*) AS n, sum(ok) AS ok FROM fit_results WHERE batch_id = ?').get(batch.id) as { n: number; ok: number };
    const status = opened.sqlite.prepare('SELECT status FROM batches WHERE id = ?').pluck().get(batch.id);
    opened.sqlite.close();
    const rate = (n: number, ms: number) => `${Math.round(n / (ms / 1000)).toLocaleString('en')} stars/s`;
    console.log(`  upload + check + import (intake)   ${((tImport - t0) / 1000).toFixed(2)} s   ${rate(N, tImport - t0)}   (${imported.starsCreated.toLocaleString('en')} stars, ${imported.measurementsCreated.toLocaleString('en')} measurements; bench process RSS ${importRssMb.toFixed(0)} MB)`);
    console.log(`  start batch (batch row + ${jobCount.toLocaleString('en')} chunk jobs)  ${((tStart - tImport) / 1000).toFixed(2)} s`);
    console.log(`  ${WORKERS} workers drain the queue        ${((tEnd - tStart) / 1000).toFixed(2)} s   ${rate(N, tEnd - tStart)}   (exit codes ${codes.join(', ')})`);
    console.log(`  CSV upload → stored results        ${((tEnd - t0) / 1000).toFixed(2)} s   ${rate(N, tEnd - t0)}`);
    console.log(`  worker peak RSS (VmHWM)            ${peaks.map((p) => `${p.toFixed(0)} MB`).join(', ')}`);
    console.log(`  results: ${results.n.toLocaleString('en')} rows (${(results.ok ?? 0).toLocaleString('en')} fitted), batch ${status}; machine: ${os.cpus().length} cores`);
    if (results.n !== N || codes.some((c) => c !== 0)) process.exitCode = 1;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

await main();
