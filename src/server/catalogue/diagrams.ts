// Diagrams: temperature–luminosity and the temperature histogram, cached per catalogue stamp
// (summary.ts). Both are drawn on the summary bins' grid (bins.ts): Teff in whole hundreds of kelvin
// and log L in tenths of a dex, neighbouring bins merged so at most the asked-for number remain.
import type Database from 'better-sqlite3';
import type { DbOrTx } from '../../db/client';
import type { CatalogueDiagrams, DiagramPoint } from '../../contracts/catalogue';
import type { CatalogueFilter } from './filter';
import { filterSql, prepared, STARS_THEN_RESULTS, type Params } from './page';
import { binnedCells, binsAnswer, cellKey, diagramsFromCells, lumBinOf, teffBinOf, type FineCells } from './bins';
import { cachedSummary, filterKey, SUMMARY_INDEX } from './summary';

/** Above this many points the temperature–luminosity diagram is sent as a 2-D histogram. */
export const DIAGRAM_POINT_LIMIT = 20_000;

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
  const cells = binsAnswer(sqlite, campaignId, f) ? binnedCells(sqlite, campaignId, f) : scannedCells(sqlite, campaignId, f, where, params);
  const { placed, withoutLum, histogram, density } = diagramsFromCells(cells, options.histogramBins ?? 40, options.densityBins ?? [120, 90]);
  if (placed + withoutLum === 0) return { placed: 0, withoutLum: 0, points: [], density: null, histogram };
  if (placed <= limit) {
    const points = prepared(
      sqlite,
      `SELECT f.star_id AS starId, s.star_key AS starKey, f.teff_k AS teffK, f.lum_lsun AS lumLsun, f.review_status AS reviewStatus
       FROM fit_results f JOIN stars s ON s.id = f.star_id WHERE ${where.join(' AND ')} AND f.lum_lsun > 0`,
    ).all(params) as DiagramPoint[];
    return { placed, withoutLum, points, density: null, histogram };
  }
  return { placed, withoutLum, points: null, density, histogram };
}

/**
 * Fine cells of a filter the bins cannot answer, from the results themselves: one pass over the
 * summary index (or the flag index, or the stars of a prefix), binned here on the bins' grid. A
 * GROUP BY would sort a million rows (spilling to temporary files past SQLite's cache), which cost
 * seconds where this costs a scan.
 */
function scannedCells(sqlite: Database.Database, campaignId: string, f: CatalogueFilter, where: string[], params: Params): FineCells {
  const from = f.starPrefix ? STARS_THEN_RESULTS : SUMMARY_INDEX;
  let scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM ${from} WHERE ${where.join(' AND ')}`;
  let skip: Set<number> | null = null;
  const scanParams = { ...params };
  if (f.flag && !f.starPrefix) {
    const rest = where.filter((w) => !w.includes('fit_result_flags'));
    if (f.flagAbsent) {
      // Whole index scan, leaving out the flag's results (a set from the flag index) instead of a
      // probe per row.
      skip = new Set(prepared(sqlite, 'SELECT fit_result_id FROM fit_result_flags WHERE campaign_id = ? AND code = ?').pluck().all(campaignId, f.flag) as number[]);
      scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM ${from} WHERE ${rest.join(' AND ')}`;
      delete scanParams.flagCode;
    } else {
      scanParams.code = f.flag;
      scanText = `SELECT f.teff_k, f.lum_lsun, f.id FROM fit_result_flags g INDEXED BY fit_result_flags_teff_idx CROSS JOIN fit_results f
        WHERE g.campaign_id = @campaign AND g.code = @code AND f.id = g.fit_result_id AND ${rest.join(' AND ')}`;
    }
  }
  const out: FineCells = { cells: new Map(), noTeff: 0 };
  for (const row of prepared(sqlite, scanText).raw(true).iterate(scanParams) as IterableIterator<[number, number | null, number]>) {
    if (skip && skip.has(row[2])) continue;
    const k = cellKey(teffBinOf(row[0]), lumBinOf(row[1]));
    out.cells.set(k, (out.cells.get(k) ?? 0) + 1);
  }
  return out;
}
