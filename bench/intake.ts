// Bench section "intake" (or `npx tsx bench/intake.ts [--stars N] [--mb M]`): uploads through the
// built web server (dist/, `npm run build` first) on a real HTTP port, read and imported by its
// intake thread (decision record 0023), while /api/health is asked every 50 ms. Two files:
//   a wide CSV of N invented stars × 8 bands (default a million) — the memory case;
//   a narrow CSV of M MB (default 190, one band per star, ~6.7 M rows) — the case that froze health.
// Prints upload+check+import time and stars/s, the server process's peak RSS (VmHWM, which includes
// its intake thread) and health latency p50/p95/max. Figures are printed, never asserted.
import { spawn } from 'node:child_process';
import { createWriteStream, existsSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { openAsBlob } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { eq } from 'drizzle-orm';
import { openDatabase } from '../src/db/client';
import { migrateDatabase } from '../src/db/migrate';
import { user } from '../src/db/schema';
import { createApp } from '../src/app/app';
import { parseEnv } from '../src/adapters/env';
import { createApiToken } from '../src/server/api-tokens';
import { toActor } from '../src/server/context';
import { makeCampaign, makeUser } from '../src/seed/factories';
import { freePort, healthOnce, peakRssMb } from '../tests/support/probes';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);
const argValue = (name: string) => {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
};
const STARS = Number(argValue('--stars') ?? 1_000_000);
const MB = Number(argValue('--mb') ?? 190);
const BANDS = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks'];

/** Writes the file line by line (never whole in this process's memory); returns its row count. */
async function writeCsv(file: string, header: string, line: (n: number) => string, until: (n: number, bytes: number) => boolean): Promise<number> {
  const out = createWriteStream(file);
  let bytes = 0;
  let n = 0;
  let chunk = header;
  while (!until(n, bytes)) {
    n++;
    const l = line(n);
    chunk += l;
    bytes += l.length;
    if (chunk.length > 1 << 20) {
      if (!out.write(chunk)) await new Promise<void>((r) => out.once('drain', () => r()));
      chunk = '';
    }
  }
  out.write(chunk);
  await new Promise<void>((r) => out.end(() => r()));
  return n;
}

const mag = (n: number, k: number) => (6 + ((n * 7919 + k * 104729) % 900) / 100).toFixed(3);

async function measure(label: string, file: string, rows: number) {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-intake-'));
  const databasePath = path.join(dir, 'bench.db');
  const port = await freePort();
  const baseUrl = `http://127.0.0.1:${port}`;
  const env = { DATABASE_PATH: databasePath, BETTER_AUTH_SECRET: 'bench-secret-bench-secret-bench-secret-01', BETTER_AUTH_URL: baseUrl, MAIL_TRANSPORT: 'outbox', UPLOAD_MAX_BYTES: String(400 * 1024 * 1024) };
  const opened = openDatabase(databasePath);
  migrateDatabase(opened.db);
  const app = createApp(opened.db, parseEnv(env));
  const analyst = await makeUser(app);
  const campaign = makeCampaign(app, analyst, { name: 'Kestrel intake bench' });
  const { secret } = createApiToken(opened.db, toActor(opened.db.select().from(user).where(eq(user.id, analyst.id)).get()!), { name: 'bench', expiresInDays: 1 });
  const auth = { authorization: `Bearer ${secret}` };
  const server = spawn(process.execPath, [path.join(root, 'dist/server/entry.mjs')], { cwd: root, env: { ...process.env, ...env, HOST: '127.0.0.1', PORT: String(port), NODE_ENV: 'production' }, stdio: ['ignore', 'ignore', 'inherit'] });
  try {
    for (let i = 0; ; i++) {
      try {
        if ((await fetch(`${baseUrl}/api/health`)).ok) break;
      } catch {
        // not listening yet
      }
      if (i > 300) throw new Error('the server did not start');
      await new Promise((r) => setTimeout(r, 100));
    }
    await fetch(`${baseUrl}/api/health`); // starts the intake thread
    await new Promise((r) => setTimeout(r, 1000));
    const baseRss = peakRssMb(server.pid!) ?? NaN;

    const samples: number[] = [];
    let sampling = true;
    const sampler = (async () => {
      while (sampling) {
        const t = performance.now();
        await healthOnce(baseUrl);
        samples.push(performance.now() - t);
        await new Promise((r) => setTimeout(r, 50));
      }
    })();
    const api = `${baseUrl}/api/campaigns/${campaign.id}`;
    const waitJob = async (uploadId: string, jobId: string) => {
      for (;;) {
        const j = ((await (await fetch(`${api}/uploads/${uploadId}/jobs/${jobId}`, { headers: auth })).json()) as { job: { status: string; refusal?: unknown; import?: { starsCreated: number; measurementsCreated: number } } }).job;
        if (j.status === 'done' || j.status === 'failed') return j;
        await new Promise((r) => setTimeout(r, 200));
      }
    };
    const t0 = performance.now();
    const form = new FormData();
    form.append('file', await openAsBlob(file, { type: 'text/csv' }), path.basename(file));
    const posted = await fetch(`${api}/uploads`, { method: 'POST', headers: { ...auth, origin: baseUrl }, body: form });
    if (posted.status !== 201) throw new Error(`upload answered ${posted.status}: ${await posted.text()}`);
    const { upload } = (await posted.json()) as { upload: { id: string; job: { id: string } } };
    const tUploaded = performance.now();
    const read = await waitJob(upload.id, upload.job.id);
    const tRead = performance.now();
    if (read.status !== 'done') throw new Error(`reading failed: ${JSON.stringify(read.refusal)}`);
    const detail = ((await (await fetch(`${api}/uploads/${upload.id}`, { headers: auth })).json()) as { upload: { detected: { layout: string; columns: unknown; rules: unknown } } }).upload;
    const imp = await fetch(`${api}/uploads/${upload.id}/import`, { method: 'POST', headers: { ...auth, 'content-type': 'application/json' }, body: JSON.stringify({ mapping: { layout: detail.detected.layout, columns: detail.detected.columns }, rules: detail.detected.rules }) });
    const { job } = (await imp.json()) as { job: { id: string } };
    const done = await waitJob(upload.id, job.id);
    const tDone = performance.now();
    sampling = false;
    await sampler;
    if (done.status !== 'done') throw new Error(`import failed: ${JSON.stringify(done.refusal)}`);
    const peak = peakRssMb(server.pid!) ?? NaN;

    const sorted = [...samples].sort((a, b) => a - b);
    const q = (p: number) => sorted[Math.min(sorted.length - 1, Math.floor(p * sorted.length))].toFixed(1);
    const s = (ms: number) => (ms / 1000).toFixed(2);
    const mb = statSync(file).size / 2 ** 20;
    console.log(`${label}: ${mb.toFixed(1)} MB, ${rows.toLocaleString('en')} rows`);
    console.log(`  upload (HTTP, to disk)             ${s(tUploaded - t0)} s`);
    console.log(`  read + check (intake thread)       ${s(tRead - tUploaded)} s`);
    console.log(`  import (one transaction)           ${s(tDone - tRead)} s`);
    console.log(`  upload + check + import            ${s(tDone - t0)} s   ${Math.round(rows / ((tDone - t0) / 1000)).toLocaleString('en')} stars/s   (${done.import!.starsCreated.toLocaleString('en')} stars, ${done.import!.measurementsCreated.toLocaleString('en')} measurements)`);
    console.log(`  web server peak RSS (VmHWM)        peak RSS ${peak.toFixed(0)} MB   (${baseRss.toFixed(0)} MB before the upload)`);
    console.log(`  /api/health during it             p50 ${q(0.5)} ms   p95 ${q(0.95)} ms   max ${sorted[sorted.length - 1].toFixed(1)} ms   (${samples.length} samples, every 50 ms)`);
  } finally {
    server.kill('SIGTERM');
    await new Promise((r) => server.once('exit', r));
    opened.sqlite.close();
    rmSync(dir, { recursive: true, force: true });
  }
}

async function main() {
  if (!existsSync(path.join(root, 'dist/server/entry.mjs'))) {
    console.log('intake: no build found; run `npm run build` first (skipped)');
    return;
  }
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-intake-files-'));
  try {
    const wide = path.join(dir, 'kestrel-wide.csv');
    const wideRows = await writeCsv(
      wide,
      ['id', 'parallax_mas', 'parallax_err_mas', ...BANDS.flatMap((b) => [b, `${b}_err`])].join(',') + '\n',
      (n) => `KST-${String(n).padStart(7, '0')},${(1 + (n % 3000) / 100).toFixed(3)},0.050,${BANDS.map((_, k) => `${mag(n, k)},0.020`).join(',')}\n`,
      (n) => n >= STARS,
    );
    await measure(`wide CSV, ${BANDS.length} bands`, wide, wideRows);
    rmSync(wide);
    const narrow = path.join(dir, 'kestrel-narrow.csv');
    const narrowRows = await writeCsv(narrow, 'id,V,V_err\n', (n) => `KN-${String(n).padStart(8, '0')},${mag(n, 1)},0.02\n`, (_, bytes) => bytes >= MB * 1024 * 1024);
    await measure('narrow CSV, one band', narrow, narrowRows);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

await main();
