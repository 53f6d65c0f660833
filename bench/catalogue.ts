// Catalogue page speed with a million results: `npx tsx bench/catalogue.ts [--stars N] [--requests N]`.
//
// Builds a temporary migrated SQLite file with one invented campaign of N stars (default 1 000 000),
// one fit result each from a first batch plus re-fits of 2 % of them from a second batch (so the
// is_current trigger and the review trigger run as they do for the worker), review states mixed
// (60 % accepted, 25 % unreviewed, 15 % flagged), 5 % without a parallax (no radius or luminosity).
// Then it asks for random pages — sort column, direction, filters (review status, Teff range, χ²_ν
// limit, flag present or absent, star id prefix) and a random position in the list (a cursor at a
// random row, forwards or backwards) — through cataloguePage, the function GET
// /api/campaigns/:id/catalogue calls, and prints p50/p95/max. Totals (catalogueCount) and the
// diagrams are separate requests and are timed separately, first request and repeated (the repeat is
// served from the per-campaign cache under its stamp, catalogue_versions); a first request adds up
// the campaign's summary bins (src/server/catalogue/bins.ts) when they answer the filter.
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import { openDatabase } from '../src/db/client';
import { migrateDatabase } from '../src/db/migrate';
import { mulberry32 } from '../src/core/fit/random';
import { CATALOGUE_SORTS, catalogueCount, catalogueDiagrams, cataloguePage } from '../src/server/catalogue';
import { parseCataloguePageRequest } from '../src/web/catalogue-params';

const FLAG_MIX: [string, number][] = [
  ['plx_weak', 0.1],
  ['outlier', 0.05],
  ['chi2_high', 0.03],
  ['ir_excess', 0.01],
  ['clipped', 0.005],
];

function percentile(sorted: number[], q: number): number {
  return sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
}

function summary(label: string, ms: number[]): string {
  const s = [...ms].sort((a, b) => a - b);
  return `${label.padEnd(34)} n=${String(s.length).padStart(4)}  p50 ${percentile(s, 0.5).toFixed(2).padStart(7)} ms  p95 ${percentile(s, 0.95).toFixed(2).padStart(7)} ms  max ${s[s.length - 1].toFixed(2).padStart(7)} ms`;
}

export async function runCatalogueBench(options: { stars?: number; requests?: number } = {}): Promise<{ p50Ms: number; p95Ms: number; maxMs: number }> {
  const N = options.stars ?? 1_000_000;
  const REQUESTS = options.requests ?? 200;
  const dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-bench-catalogue-'));
  const { db, sqlite } = openDatabase(path.join(dir, 'bench.db'));
  try {
    migrateDatabase(db);
    const rand = mulberry32(20260);
    const t0 = performance.now();
    sqlite.prepare("INSERT INTO user (id, name, email, email_verified, created_at, updated_at) VALUES ('u1', 'Bench Analyst', 'bench@lanternfield.test', 1, 0, 0)").run();
    sqlite.prepare("INSERT INTO campaigns (id, name, name_key, description, created_by_id) VALUES ('c1', 'Lanternfield bench', 'lanternfield bench', '', 'u1')").run();
    const batch = sqlite.prepare("INSERT INTO batches (id, campaign_id, options, band_library_version, software_version, status, star_count, created_at) VALUES (?, 'c1', '{}', 'bench', 'bench', 'finished', ?, ?)");
    batch.run('b1', N, 1_000);
    batch.run('b2', Math.round(N * 0.02), 2_000);
    const insertStar = sqlite.prepare("INSERT INTO stars (campaign_id, star_key, ra_deg, dec_deg, parallax_mas) VALUES ('c1', ?, ?, ?, ?)");
    const insertFit = sqlite.prepare(
      `INSERT INTO fit_results (batch_id, campaign_id, star_id, ok, teff_k, teff_err_k, radius_rsun, lum_lsun, chi2_red, n_bands, bands_used, flags, band_library_version, software_version, review_status)
       VALUES (?, 'c1', ?, 1, ?, ?, ?, ?, ?, 8, 'B V G BP RP J H Ks', ?, 'bench', 'bench', ?)`,
    );
    const fit = (batchId: string, starId: number, status: string) => {
      const teffK = 3000 * Math.exp(rand() * Math.log(4)); // 3000–12000 K, log-uniform
      const noPlx = rand() < 0.05;
      const radius = noPlx ? null : Math.exp((rand() + rand() + rand() - 1.5) * 1.5);
      const lum = radius === null ? null : radius * radius * (teffK / 5772) ** 4;
      const chi2 = -Math.log(1 - rand()) * 1.2;
      const flags = FLAG_MIX.filter(([, p]) => rand() < p).map(([c]) => c);
      if (noPlx) flags.push('plx_missing');
      insertFit.run(batchId, starId, teffK, teffK * 0.02, radius, lum, chi2, flags.join(' '), status);
    };
    sqlite.transaction(() => {
      for (let i = 1; i <= N; i++) {
        const key = `LNF-${String(i).padStart(7, '0')}`;
        const id = Number(insertStar.run(key, rand() * 360, rand() * 180 - 90, 1 + rand() * 20).lastInsertRowid);
        const u = rand();
        fit('b1', id, u < 0.6 ? 'accepted' : u < 0.85 ? 'pending' : 'flagged');
      }
      for (let i = 1; i <= N; i += 50) fit('b2', i, 'pending');
    })();
    // No ANALYZE: the app never runs it, and with sqlite_stat1 of a one-campaign database SQLite
    // picks skip-scans that lose the sort order (checked with EXPLAIN QUERY PLAN).
    const loadS = (performance.now() - t0) / 1000;
    const current = (sqlite.prepare('SELECT count(*) AS n FROM fit_results WHERE is_current = 1').get() as { n: number }).n;
    const cells = (sqlite.prepare("SELECT count(*) AS n FROM catalogue_bins WHERE campaign_id = 'c1'").get() as { n: number }).n;
    console.log(`catalogue bench: ${N.toLocaleString('en-US')} stars, ${current.toLocaleString('en-US')} current results (${cells.toLocaleString('en-US')} summary bin cells), loaded in ${loadS.toFixed(1)} s`);

    const maxId = (sqlite.prepare('SELECT max(id) AS m FROM fit_results').get() as { m: number }).m;
    const rowAt = sqlite.prepare('SELECT f.id, f.teff_k, f.lum_lsun, f.radius_rsun, f.chi2_red, f.review_status, s.star_key FROM fit_results f NOT INDEXED JOIN stars s ON s.id = f.star_id WHERE f.id >= ? AND f.is_current = 1 ORDER BY f.id LIMIT 1');
    const pick = <T>(xs: readonly T[]) => xs[Math.floor(rand() * xs.length)];
    const pageMs: number[] = [];
    const countMs: number[] = [];
    const countWarmMs: number[] = [];
    const kinds = new Map<string, number[]>();
    for (let r = 0; r < REQUESTS; r++) {
      const p = new URLSearchParams();
      const sort = pick(CATALOGUE_SORTS);
      p.set('sort', sort);
      p.set('dir', rand() < 0.5 ? 'asc' : 'desc');
      const filters: string[] = [];
      if (rand() < 0.5) {
        p.set('status', pick(['accepted', 'pending', 'flagged', 'accepted,flagged']));
        filters.push('status');
      }
      if (rand() < 0.3) {
        const lo = 3000 + rand() * 8000;
        p.set('teffMin', lo.toFixed(0));
        p.set('teffMax', (lo + 50 + rand() * 2000).toFixed(0));
        filters.push('teff');
      }
      if (rand() < 0.25) {
        p.set('chi2Max', pick(['1', '2', '5']));
        filters.push('chi2');
      }
      if (rand() < 0.25) {
        p.set('flag', pick([...FLAG_MIX.map(([c]) => c), 'plx_missing', 'temp_lower_bound']));
        if (rand() < 0.5) p.set('flagAbsent', '1');
        filters.push('flag');
      }
      if (rand() < 0.15) {
        p.set('q', `LNF-${String(Math.floor(rand() * N) + 1).padStart(7, '0').slice(0, 2 + Math.floor(rand() * 5))}`);
        filters.push('prefix');
      }
      // Position: the first page, or a cursor at a random row (as if the reader had paged there).
      if (rand() < 0.7) {
        const row = rowAt.get(1 + Math.floor(rand() * maxId)) as Record<string, number | string | null> | undefined;
        if (row) {
          const v = sort === 'star_key' ? row.star_key : row[sort];
          const cursor = Buffer.from(JSON.stringify(v === null ? { p: 'n', i: row.id } : { p: 'v', v, i: row.id })).toString('base64url');
          p.set(rand() < 0.8 ? 'after' : 'before', cursor);
        }
      }
      const started = performance.now();
      const page = cataloguePage(db, 'c1', parseCataloguePageRequest(p));
      const ms = performance.now() - started;
      pageMs.push(ms);
      const kind = `sort ${sort}${filters.length ? ` + ${filters.join(', ')}` : ''}`;
      for (const k of [`sort ${sort}`, ...filters.map((f) => `filter ${f}`)]) {
        if (!kinds.has(k)) kinds.set(k, []);
        kinds.get(k)!.push(ms);
      }
      if (ms > 50) console.log(`  slow page (${ms.toFixed(1)} ms, ${page.rows.length} rows): ${kind} ${p.toString().slice(0, 160)}`);
      if (r % 10 === 0) {
        const c0 = performance.now();
        catalogueCount(db, 'c1', parseCataloguePageRequest(p));
        countMs.push(performance.now() - c0);
        // The same totals again (the table's next page, another reader): served under the stamp.
        const c1 = performance.now();
        catalogueCount(db, 'c1', parseCataloguePageRequest(p));
        countWarmMs.push(performance.now() - c1);
      }
    }
    console.log(summary('page requests (GET …/catalogue)', pageMs));
    for (const [k, ms] of [...kinds.entries()].sort()) console.log(`  ${summary(k, ms)}`);
    console.log(summary('totals, first request', countMs));
    console.log(summary('totals, repeated (cached)', countWarmMs));
    const diagramMs: number[] = [];
    const diagramWarmMs: number[] = [];
    const diagramFilters = ['status=accepted', 'status=all', 'status=flagged', 'status=accepted,pending', 'status=all&chi2Max=2', 'status=accepted&teffMin=4000&teffMax=7000', 'status=all&flag=plx_weak&flagAbsent=1'];
    for (const q of diagramFilters) {
      const d0 = performance.now();
      const d = catalogueDiagrams(db, 'c1', parseCataloguePageRequest(new URLSearchParams(q)));
      diagramMs.push(performance.now() - d0);
      console.log(`  diagrams ${q}: ${diagramMs[diagramMs.length - 1].toFixed(1)} ms`);
      if (!d.density && d.placed > 20_000) throw new Error('diagram was not binned');
      const d1 = performance.now();
      catalogueDiagrams(db, 'c1', parseCataloguePageRequest(new URLSearchParams(q)));
      diagramWarmMs.push(performance.now() - d1);
    }
    console.log(summary('diagrams, first request', diagramMs));
    console.log(summary('diagrams, repeated (cached)', diagramWarmMs));
    // A worker writes one more result: the stamp moves, the next request adds up the bins again
    // (a filter the bins cannot answer, e.g. a star-id prefix, would read the results).
    sqlite.prepare("INSERT INTO batches (id, campaign_id, options, band_library_version, software_version, status, star_count, created_at) VALUES ('b3', 'c1', '{}', 'bench', 'bench', 'finished', 1, 3000)").run();
    fit('b3', 7, 'pending');
    const i0 = performance.now();
    catalogueDiagrams(db, 'c1', parseCataloguePageRequest(new URLSearchParams('status=all')));
    console.log(`  diagrams after one new result: ${(performance.now() - i0).toFixed(2)} ms`);
    const i1 = performance.now();
    catalogueCount(db, 'c1', parseCataloguePageRequest(new URLSearchParams('status=accepted')));
    console.log(`  totals after one new result: ${(performance.now() - i1).toFixed(2)} ms`);
    const s = [...pageMs].sort((a, b) => a - b);
    return { p50Ms: percentile(s, 0.5), p95Ms: percentile(s, 0.95), maxMs: s[s.length - 1] };
  } finally {
    sqlite.close();
    rmSync(dir, { recursive: true, force: true });
  }
}

const invokedDirectly = process.argv[1] && path.resolve(process.argv[1]) === path.resolve(new URL(import.meta.url).pathname);
if (invokedDirectly) {
  const args = process.argv.slice(2);
  const arg = (n: string) => {
    const i = args.indexOf(n);
    return i >= 0 ? Number(args[i + 1]) : undefined;
  };
  const r = await runCatalogueBench({ stars: arg('--stars'), requests: arg('--requests') });
  console.log(`catalogue pages: p50 ${r.p50Ms.toFixed(2)} ms, p95 ${r.p95Ms.toFixed(2)} ms (target: p95 < 50 ms)`);
}
