// The catalogue's summary bins (drizzle/0014, src/db/schema/catalogue.ts): totals and diagrams of a
// campaign added up from cells instead of read from every result. The cells are kept by triggers in
// the transaction that writes, reviews or supersedes a result, so a first request at a million
// results reads a few thousand cells, and one new result changes one cell (plus one per flag).
//
// A cell is (review status, χ²_ν class, Teff bin of 100 K, log L bin of 0.1 dex), once for every
// current result (flag '') and once more per flag it carries. A filter is answered from cells when
// each of its terms falls on cell edges: any review statuses; a flag present or absent (absent =
// all − present, cell by cell); χ²_ν ≤ 1, 2, 3, 5 or 10; and any Teff range: whole bins from the
// cells, the (at most two) bins its limits cut read from the results through the Teff index.
// Anything else (a star-id prefix, χ²_ν ≤ 1.5) is answered by reading the results, exactly as
// before, and binned on the same grid: the diagrams look the same whichever way they were made.
import type Database from 'better-sqlite3';
import type { CatalogueFilter } from './filter';
import { filterSql, prepared, type Params } from './page';

/** Width of a Teff bin (K) and of a log L bin (dex); edges of the χ²_ν classes. Also in drizzle/0014. */
export const TEFF_BIN_K = 100;
export const LOG_LUM_BIN = 0.1;
export const CHI2_CLASS_EDGES = [1, 2, 3, 5, 10] as const;
/** lum_bin of a result without a (positive) luminosity; teff_bin and chi2_class use -1. */
export const NO_LUM_BIN = -100_000;

export function teffBinOf(teffK: number): number {
  return Math.floor(teffK / TEFF_BIN_K);
}
export function lumBinOf(lumLsun: number | null): number {
  return lumLsun === null || !(lumLsun > 0) ? NO_LUM_BIN : Math.floor(Math.log10(lumLsun) * 10);
}

/** Fine cells of a filter: counts by (Teff bin, log L bin), plus the rows without a Teff. */
export interface FineCells {
  /** key teffBin * 2^20 + (lumBin + 2^19) → count; only rows with a Teff. */
  cells: Map<number, number>;
  noTeff: number;
}

const LUM_OFFSET = 2 ** 19;
export const cellKey = (teffBin: number, lumBin: number) => teffBin * 2 ** 20 + (lumBin === NO_LUM_BIN ? 0 : lumBin + LUM_OFFSET);
export const cellOf = (key: number): [number, number] => {
  const t = Math.floor(key / 2 ** 20);
  const l = key - t * 2 ** 20;
  return [t, l === 0 ? NO_LUM_BIN : l - LUM_OFFSET];
};

/** Tests switch the bins off to compare them with reading every result. */
export const catalogueBinsTuning = { enabled: true };

/** Whether the cells answer this filter exactly (see the top of this file). */
export function binsAnswer(_sqlite: Database.Database, _campaignId: string, f: CatalogueFilter): boolean {
  if (!catalogueBinsTuning.enabled || f.starPrefix) return false;
  return f.chi2Max === undefined || (CHI2_CLASS_EDGES as readonly number[]).includes(f.chi2Max);
}

/**
 * A Teff range as whole bins plus the parts of the bins its limits cut: [cutLo, cutHi) is covered
 * by whole bins, the results in [lo, cutLo) and [cutHi, hi] are read (at most two bins' worth).
 */
function teffSplit(f: CatalogueFilter): { whole: [number, number] | null; edges: [number, number, boolean][] } {
  const lo = f.teffMinK;
  const hi = f.teffMaxK;
  if (lo === undefined && hi === undefined) return { whole: [-Infinity, Infinity], edges: [] };
  const cutLo = lo === undefined ? -Infinity : Math.ceil(lo / TEFF_BIN_K) * TEFF_BIN_K;
  const cutHi = hi === undefined ? Infinity : Math.floor(hi / TEFF_BIN_K) * TEFF_BIN_K;
  // [a, b) or, with the flag, [a, b].
  if (cutLo > cutHi) return { whole: null, edges: [[lo!, hi!, true]] };
  const edges: [number, number, boolean][] = [];
  if (lo !== undefined && lo < cutLo) edges.push([lo, cutLo, false]);
  if (hi !== undefined) edges.push([cutHi, hi, true]);
  return { whole: [cutLo, cutHi], edges };
}

function whereOf(f: CatalogueFilter, flag: string, params: Record<string, unknown>): string {
  const w = ['campaign_id = @campaign', 'flag = @flag', 'n <> 0'];
  params.flag = flag;
  if (f.status && f.status.length) w.push(`review_status IN (${f.status.map((s, i) => ((params[`st${i}`] = s), `@st${i}`)).join(', ')})`);
  if (f.chi2Max !== undefined) {
    params.chi2Class = (CHI2_CLASS_EDGES as readonly number[]).indexOf(f.chi2Max);
    w.push('chi2_class BETWEEN 0 AND @chi2Class');
  }
  if (f.teffMinK !== undefined || f.teffMaxK !== undefined) {
    const whole = teffSplit(f).whole!;
    params.tlo = Number.isFinite(whole[0]) ? Math.max(0, whole[0] / TEFF_BIN_K) : 0;
    w.push('teff_bin >= @tlo');
    if (Number.isFinite(whole[1])) {
      params.thi = whole[1] / TEFF_BIN_K;
      w.push('teff_bin < @thi');
    }
  }
  return w.join(' AND ');
}

function readCells(sqlite: Database.Database, campaignId: string, f: CatalogueFilter, flag: string): FineCells {
  const out: FineCells = { cells: new Map(), noTeff: 0 };
  const split = teffSplit(f);
  if (split.whole) {
    const params: Record<string, unknown> = { campaign: campaignId };
    const rows = prepared(sqlite, `SELECT teff_bin, lum_bin, sum(n) FROM catalogue_bins WHERE ${whereOf(f, flag, params)} GROUP BY teff_bin, lum_bin`)
      .raw(true)
      .all(params) as [number, number, number][];
    for (const [t, l, n] of rows) {
      if (t < 0) out.noTeff += n;
      else out.cells.set(cellKey(t, l), n);
    }
  }
  // The parts of bins cut by a Teff limit: those results are read through the Teff index.
  for (const [a, b, inclusive] of split.edges) {
    const params: Params = { campaign: campaignId, ta: a, tb: b };
    const rest = filterSql({ ...f, teffMinK: undefined, teffMaxK: undefined, flag: flag || undefined, flagAbsent: undefined }, params, { flagsFromIndex: true });
    const text = `SELECT f.teff_k, f.lum_lsun FROM fit_results f INDEXED BY fit_results_current_teff_idx
      WHERE f.campaign_id = @campaign AND f.is_current = 1 AND f.teff_k >= @ta AND f.teff_k ${inclusive ? '<=' : '<'} @tb${rest.length ? ` AND ${rest.join(' AND ')}` : ''}`;
    for (const [t, l] of prepared(sqlite, text).raw(true).iterate(params) as IterableIterator<[number, number | null]>) {
      const k = cellKey(teffBinOf(t), lumBinOf(l));
      out.cells.set(k, (out.cells.get(k) ?? 0) + 1);
    }
  }
  return out;
}

/** The filter's fine cells from the bins (call binsAnswer first). */
export function binnedCells(sqlite: Database.Database, campaignId: string, f: CatalogueFilter): FineCells {
  if (!f.flag) return readCells(sqlite, campaignId, f, '');
  const withFlag = readCells(sqlite, campaignId, f, f.flag);
  if (!f.flagAbsent) return withFlag;
  const all = readCells(sqlite, campaignId, f, '');
  for (const [k, n] of withFlag.cells) {
    const left = (all.cells.get(k) ?? 0) - n;
    if (left === 0) all.cells.delete(k);
    else all.cells.set(k, left);
  }
  all.noTeff -= withFlag.noTeff;
  return all;
}

/** Current results of the campaign, from the bins. */
export function binnedCampaignTotal(sqlite: Database.Database, campaignId: string): number {
  return (prepared(sqlite, "SELECT coalesce(sum(n), 0) FROM catalogue_bins WHERE campaign_id = ? AND flag = ''").pluck().get(campaignId) as number) ?? 0;
}

export function totalOf(c: FineCells): number {
  let n = c.noTeff;
  for (const v of c.cells.values()) n += v;
  return n;
}

/** Histogram and 2-D histogram of fine cells, merged to at most the given numbers of bins (the histogram to about √n). */
export function diagramsFromCells(c: FineCells, histogramBins: number, densityBins: [number, number]) {
  let tmin = Infinity;
  let tmax = -Infinity;
  let lmin = Infinity;
  let lmax = -Infinity;
  let placed = 0;
  let withoutLum = 0;
  const cells = [...c.cells].map(([k, n]) => [...cellOf(k), n] as [number, number, number]);
  for (const [t, l, n] of cells) {
    if (n === 0) continue;
    if (t < tmin) tmin = t;
    if (t > tmax) tmax = t;
    if (l === NO_LUM_BIN) {
      withoutLum += n;
      continue;
    }
    placed += n;
    if (l < lmin) lmin = l;
    if (l > lmax) lmax = l;
  }
  const histogram = { edgesK: [] as number[], counts: [] as number[] };
  if (placed + withoutLum === 0) return { placed, withoutLum, histogram, density: null };
  // Whole bins of the fine grid: every edge is a multiple of 100 K (and of 0.1 dex).
  const merge = (lo: number, hi: number, most: number) => {
    const m = Math.max(1, Math.ceil((hi - lo + 1) / Math.max(1, most)));
    return { m, bins: Math.ceil((hi - lo + 1) / m) };
  };
  // About √n bars for n stars (the square-root choice, common practice), at most histogramBins:
  // 43 stars get 7 bars, not 40 bars of one star each.
  const h = merge(tmin, tmax, Math.min(histogramBins, Math.ceil(Math.sqrt(placed + withoutLum))));
  histogram.edgesK = Array.from({ length: h.bins + 1 }, (_, i) => (tmin + i * h.m) * TEFF_BIN_K);
  histogram.counts = new Array<number>(h.bins).fill(0);
  for (const [t, , n] of cells) histogram.counts[Math.floor((t - tmin) / h.m)] += n;
  if (placed === 0) return { placed, withoutLum, histogram, density: null };
  const dt = merge(tmin, tmax, densityBins[0]);
  const dl = merge(lmin, lmax, densityBins[1]);
  const teffEdgesK = Array.from({ length: dt.bins + 1 }, (_, i) => (tmin + i * dt.m) * TEFF_BIN_K);
  const logLumEdges = Array.from({ length: dl.bins + 1 }, (_, j) => (lmin + j * dl.m) / 10);
  const counts = Array.from({ length: dl.bins }, () => new Array<number>(dt.bins).fill(0));
  for (const [t, l, n] of cells) {
    if (l === NO_LUM_BIN) continue;
    counts[Math.floor((l - lmin) / dl.m)][Math.floor((t - tmin) / dt.m)] += n;
  }
  return { placed, withoutLum, histogram, density: { teffEdgesK, logLumEdges, counts } };
}
