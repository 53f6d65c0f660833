// Bench section "export" (or `npx tsx bench/export.ts [--stars N]`): downloads of a campaign's whole
// catalogue in each format. A temporary migrated SQLite file gets N invented stars (default
// 1 000 000) with one current fit each (mixed review states and flags, 5 % without a parallax);
// then each format is downloaded in its own process through the route's streamed Response
// (exportResponse, the body read and thrown away as a client would), and the section prints the
// time, the bytes and that process's peak resident memory (VmHWM). Speeds are measured here,
// never in tests. `--db <file>` keeps the database in that file (made once) for repeated runs.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { openDatabase } from '../src/db/client';
import { migrateDatabase } from '../src/db/migrate';
import { mulberry32 } from '../src/core/fit/random';
import { getCurrentVersion } from '../src/server/band-library';

const here = fileURLToPath(import.meta.url);
const args = process.argv.slice(2);
const arg = (n: string) => {
  const i = args.indexOf(n);
  return i >= 0 ? args[i + 1] : undefined;
};

function peakRssMb(): number {
  const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'));
  return m ? Number(m[1]) / 1024 : NaN;
}

/** Child: one download, printed as JSON. */
async function downloadOne(databasePath: string, format: string) {
  const { exportResponse } = await import('../src/server/exports');
  const { db, sqlite } = openDatabase(databasePath);
  const t0 = performance.now();
  const res = exportResponse(db, { id: 'c1', name: 'Lanternfield bench' }, {}, format as 'csv');
  const reader = res.body!.getReader();
  let bytes = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    bytes += value.byteLength;
  }
  const seconds = (performance.now() - t0) / 1000;
  sqlite.close();
  console.log(JSON.stringify({ seconds, bytes, peakRssMb: peakRssMb() }));
}

const FLAG_MIX: [string, number][] = [
  ['plx_weak', 0.1],
  ['outlier', 0.05],
  ['chi2_high', 0.03],
  ['ir_excess', 0.01],
];

function load(databasePath: string, n: number) {
  const { db, sqlite } = openDatabase(databasePath);
  migrateDatabase(db);
  const version = getCurrentVersion(db).label;
  const rand = mulberry32(4242);
  sqlite.prepare("INSERT INTO user (id, name, email, email_verified, created_at, updated_at) VALUES ('u1', 'Bench Analyst', 'bench@lanternfield.test', 1, 0, 0)").run();
  sqlite.prepare("INSERT INTO campaigns (id, name, name_key, description, created_by_id) VALUES ('c1', 'Lanternfield bench', 'lanternfield bench', '', 'u1')").run();
  sqlite
    .prepare("INSERT INTO batches (id, campaign_id, options, band_library_version, software_version, status, star_count, created_at) VALUES ('b1', 'c1', ?, ?, 'bench', 'finished', ?, 1000)")
    .run(JSON.stringify({ law: 'f99', rv: 3.1, avMag: 0, fitAv: false, floorFraction: 0.02, excludeBands: [], clip: false, includeLongBands: false }), version, n);
  const insertStar = sqlite.prepare("INSERT INTO stars (campaign_id, star_key, ra_deg, dec_deg, parallax_mas) VALUES ('c1', ?, ?, ?, ?)");
  const insertFit = sqlite.prepare(
    `INSERT INTO fit_results (batch_id, campaign_id, star_id, ok, teff_k, teff_err_k, teff_err_formal_k, theta_mas, theta_err_mas, radius_rsun, radius_err_rsun,
       lum_lsun, lum_err_lsun, fbol_cgs, fbol_err_cgs, av_mag, chi2_red, n_bands, bands_used, flags, band_library_version, software_version, review_status)
     VALUES ('b1', 'c1', ?, 1, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, 0, ?, 8, 'B V G BP RP J H Ks', ?, ?, 'bench', ?)`,
  );
  const t0 = performance.now();
  const statuses = ['accepted', 'accepted', 'accepted', 'pending', 'flagged'];
  sqlite.transaction(() => {
    for (let i = 1; i <= n; i++) {
      const id = Number(insertStar.run(`LNF-${String(i).padStart(7, '0')}`, rand() * 360, rand() * 180 - 90, 1 + rand() * 20).lastInsertRowid);
      const teff = 3000 * Math.exp(rand() * Math.log(4));
      const noPlx = rand() < 0.05;
      const theta = 0.05 + rand();
      const radius = noPlx ? null : Math.exp((rand() + rand() + rand() - 1.5) * 1.5);
      const lum = radius === null ? null : radius * radius * (teff / 5772) ** 4;
      const flags = FLAG_MIX.filter(([, p]) => rand() < p).map(([c]) => c);
      if (noPlx) flags.push('plx_missing');
      insertFit.run(id, teff, teff * 0.02, teff * 0.015, theta, theta * 0.03, radius, radius === null ? null : radius * 0.05, lum, lum === null ? null : lum * 0.1,
        1e-9 * rand(), 2e-11 * rand(), -Math.log(1 - rand()) * 1.2, flags.join(' '), version, statuses[Math.floor(rand() * statuses.length)]);
    }
  })();
  sqlite.close();
  return (performance.now() - t0) / 1000;
}

async function main() {
  const n = Number(arg('--stars') ?? 1_000_000);
  // --db <file>: keep the database there (made once) for repeated runs or a profiler.
  const kept = arg('--db');
  const dir = kept ? null : mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-export-'));
  const databasePath = kept ?? path.join(dir!, 'bench.db');
  try {
    const loadS = kept && existsSync(kept) ? 0 : load(databasePath, n);
    console.log(`export: ${n.toLocaleString('en')} invented stars with one current fit each, loaded in ${loadS.toFixed(1)} s (not timed below); each format in its own process`);
    for (const format of ['csv', 'votable', 'fits', 'json']) {
      const run = spawnSync(process.execPath, ['--import', 'tsx', here, '--child', databasePath, format], { encoding: 'utf8', maxBuffer: 1 << 20 });
      if (run.status !== 0) {
        console.error(run.stderr);
        process.exitCode = 1;
        continue;
      }
      const r = JSON.parse(run.stdout.trim().split('\n').pop()!) as { seconds: number; bytes: number; peakRssMb: number };
      console.log(
        `  ${format.padEnd(8)} ${r.seconds.toFixed(2).padStart(7)} s   ${Math.round(n / r.seconds).toLocaleString('en').padStart(9)} rows/s   ${(r.bytes / 1e6).toFixed(0).padStart(5)} MB   peak RSS ${r.peakRssMb.toFixed(0)} MB`,
      );
    }
  } finally {
    if (dir) rmSync(dir, { recursive: true, force: true });
  }
}

const childAt = args.indexOf('--child');
if (childAt >= 0) await downloadOne(args[childAt + 1], args[childAt + 2]);
else await main();
