// Diagrams: temperature–luminosity and the temperature histogram, cached per catalogue stamp
// (summary.ts).
import type Database from 'better-sqlite3';
import type { DbOrTx } from '../../db/client';
import type { CatalogueDiagrams, DiagramPoint } from '../../contracts/catalogue';
import type { CatalogueFilter } from './filter';
import { filterSql, prepared, STARS_THEN_RESULTS, type Params } from './page';
import { cachedSummary, filterKey, SUMMARY_INDEX } from './summary';

/** Above this many points the temperature–luminosity diagram is sent as a 2-D histogram. */
export const DIAGRAM_POINT_LIMIT = 20_000;

/** Edges of `bins` equal bins over [lo, hi] (a single value gets a bin of ±0.5 % around it). */
function edges(lo: number, hi: number, bins: number): number[] {
  if (!(hi > lo)) {
    const pad = Math.max(Math.abs(lo) * 0.005, 1e-3);
    lo -= pad;
    hi += pad;
  }
  return Array.from({ length: bins + 1 }, (_, i) => lo + ((hi - lo) * i) / bins);
}

type DiagramOptions = { pointLimit?: number; densityBins?: [number, number]; histogramBins?: number };

/** The campaign's diagrams for a filter (cached per stamp, like the totals). */
export function catalogueDiagrams(db: DbOrTx, campaignId: string, f: CatalogueFilter, options: DiagramOptions = {}): CatalogueDiagrams {
  const sqlite = (db as unknown as { $client: Database.Database }).$client;
  const key = `diagrams?${filterKey(f)}&o=${JSON.stringify([options.pointLimit ?? null, options.densityBins ?? null, options.histogramBins ?? null])}`;
  return cachedSummary(sqlite, campaignId, key, () => computeDiagrams(sqlite, campaignId, f, options));
}

function computeDiagrams(sqlite: Database.Database, campaignId: string, f: CatalogueFilter, options: DiagramOptions): CatalogueDiagrams {
  const limit = options.pointLimit ?? DIAGRAM_POINT_LIMIT;
  const params: Params = { campaign: campaignId };
  const where = ['f.campaign_id = @campaign', 'f.is_current = 1', 'f.teff_k IS NOT NULL', ...filterSql(f, params, { flagsFromIndex: true }), ...(f.starPrefix ? ['s.campaign_id = @campaign', 's.id = f.star_id'] : [])];
  const from = f.starPrefix ? STARS_THEN_RESULTS : SUMMARY_INDEX;
  // One pass over the index into typed arrays, binned here: a GROUP BY would sort a million rows
  // (spilling to temporary files past SQLite's cache), which cost seconds where this costs a scan.
  let teff = new Float64Array(4096);
  let logLum = new Float64Array(4096);
  let n = 0;
  let placed = 0;
  let tlo = Infinity;
  let thi = -Infinity;
  let llo = Infinity;
  let lhi = -Infinity;
  let scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM ${from} WHERE ${where.join(' AND ')}`;
  let skip: Set<number> | null = null;
  if (f.flag && !f.starPrefix) {
    const rest = where.filter((w) => !w.includes('fit_result_flags'));
    if (f.flagAbsent) {
      // Whole index scan, leaving out the flag's results (a set from the flag index) instead of a
      // probe per row.
      skip = new Set(prepared(sqlite, 'SELECT fit_result_id FROM fit_result_flags WHERE campaign_id = ? AND code = ?').pluck().all(campaignId, f.flag) as number[]);
      scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM ${from} WHERE ${rest.join(' AND ')}`;
    } else {
      params.code = f.flag;
      scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM fit_result_flags g INDEXED BY fit_result_flags_teff_idx CROSS JOIN fit_results f
        WHERE g.campaign_id = @campaign AND g.code = @code AND f.id = g.fit_result_id AND ${rest.join(' AND ')}`;
    }
  }
  const scan = prepared(sqlite, scanText);
  const scanParams = { ...params };
  if (skip) delete scanParams.flagCode;
  for (const row of scan.raw(true).iterate(scanParams) as IterableIterator<[number, number | null, number]>) {
    if (skip && skip.has(row[2])) continue;
    if (n === teff.length) {
      const grow = (a: Float64Array) => {
        const b = new Float64Array(a.length * 2);
        b.set(a);
        return b;
      };
      teff = grow(teff);
      logLum = grow(logLum);
    }
    const t = row[0];
    const l = row[1] !== null && row[1] > 0 ? Math.log10(row[1]) : NaN;
    teff[n] = t;
    logLum[n] = l;
    n++;
    if (t < tlo) tlo = t;
    if (t > thi) thi = t;
    if (l === l) {
      placed++;
      if (l < llo) llo = l;
      if (l > lhi) lhi = l;
    }
  }
  const hBins = options.histogramBins ?? 40;
  const histogram = { edgesK: [] as number[], counts: [] as number[] };
  if (n === 0) return { placed: 0, withoutLum: 0, points: [], density: null, histogram };
  histogram.edgesK = edges(tlo, thi, hBins);
  const lo = histogram.edgesK[0];
  const w = (histogram.edgesK[hBins] - lo) / hBins;
  histogram.counts = new Array<number>(hBins).fill(0);
  for (let k = 0; k < n; k++) histogram.counts[Math.min(hBins - 1, Math.floor((teff[k] - lo) / w))]++;
  if (placed <= limit) {
    const points = prepared(
      sqlite,
      `SELECT f.star_id AS starId, s.star_key AS starKey, f.teff_k AS teffK, f.lum_lsun AS lumLsun, f.review_status AS reviewStatus
       FROM fit_results f JOIN stars s ON s.id = f.star_id WHERE ${where.join(' AND ')} AND f.lum_lsun > 0`,
    ).all(params) as DiagramPoint[];
    return { placed, withoutLum: n - placed, points, density: null, histogram };
  }
  const [nt, nl] = options.densityBins ?? [120, 90];
  const teffEdgesK = edges(tlo, thi, nt);
  const logLumEdges = edges(llo, lhi, nl);
  const t0 = teffEdgesK[0];
  const l0 = logLumEdges[0];
  const wt = (teffEdgesK[nt] - t0) / nt;
  const wl = (logLumEdges[nl] - l0) / nl;
  const counts = Array.from({ length: nl }, () => new Array<number>(nt).fill(0));
  for (let k = 0; k < n; k++) {
    const l = logLum[k];
    if (l !== l) continue;
    counts[Math.min(nl - 1, Math.floor((l - l0) / wl))][Math.min(nt - 1, Math.floor((teff[k] - t0) / wt))]++;
  }
  return { placed, withoutLum: n - placed, points: null, density: { teffEdgesK, logLumEdges, counts }, histogram };
}
