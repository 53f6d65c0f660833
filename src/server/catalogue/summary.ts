// Totals and diagrams add up the campaign's summary bins when those answer the filter (bins.ts),
// else they read every matching row; either way they are kept per database, campaign and filter
// under the campaign's stamp (catalogue_versions, raised by triggers on every result insert, review
// decision, change of current result or deletion: drizzle/0008). A stamp lookup is one primary-key
// read, so a repeated request costs nothing and a stale answer is never served, even when another
// process (the worker) wrote the change.
import type Database from 'better-sqlite3';
import type { DbOrTx } from '../../db/client';
import { filterToParams, type CatalogueFilter } from './filter';
import { binnedCampaignTotal, binnedCells, binsAnswer, totalOf } from './bins';
import { filterSql, prepared, STARS_THEN_RESULTS, type Params } from './page';

const SUMMARY_CACHE_ENTRIES = 256;
const summaryCaches = new WeakMap<Database.Database, Map<string, { version: number; value: unknown }>>();
/** Hits and misses since start (tests and the bench read them). */
export const catalogueSummaryStats = { hits: 0, misses: 0 };

/** The campaign's catalogue stamp (0 before its first result). */
export function catalogueVersion(sqlite: Database.Database, campaignId: string): number {
  const row = prepared(sqlite, 'SELECT version FROM catalogue_versions WHERE campaign_id = ?').get(campaignId) as { version: number } | undefined;
  return row?.version ?? 0;
}

export function cachedSummary<T>(sqlite: Database.Database, campaignId: string, key: string, compute: () => T): T {
  let m = summaryCaches.get(sqlite);
  if (!m) summaryCaches.set(sqlite, (m = new Map()));
  const k = `${campaignId}\u0000${key}`;
  // Stamp and rows are read in one read transaction, so the value stored belongs to the stamp.
  const read = sqlite.transaction(() => {
    const version = catalogueVersion(sqlite, campaignId);
    const hit = m.get(k);
    if (hit && hit.version === version) {
      catalogueSummaryStats.hits++;
      // Most recently used last, so the oldest entry is the first one evicted.
      m.delete(k);
      m.set(k, hit);
      return hit.value as T;
    }
    catalogueSummaryStats.misses++;
    const value = compute();
    m.delete(k);
    m.set(k, { version, value });
    while (m.size > SUMMARY_CACHE_ENTRIES) m.delete(m.keys().next().value!);
    return value;
  });
  // Inside a caller's transaction the rows may be uncommitted (and rolled back later): no caching.
  if (sqlite.inTransaction) return compute();
  return read.deferred();
}

/** A stable key for a filter (same filter, same key, whatever order its fields were set in). */
export function filterKey(f: CatalogueFilter): string {
  return filterToParams(f).toString();
}

/** How many rows a filter leaves (a separate request: it reads every matching row; cached per stamp). */
export function catalogueCount(db: DbOrTx, campaignId: string, f: CatalogueFilter): { total: number; campaignTotal: number } {
  const sqlite = (db as unknown as { $client: Database.Database }).$client;
  return cachedSummary(sqlite, campaignId, `count?${filterKey(f)}`, () => computeCount(sqlite, campaignId, f));
}

/** Index that holds every column a filter without star prefix or flag needs (no row reads). */
export const SUMMARY_INDEX = 'fit_results f INDEXED BY fit_results_current_summary_idx';

function computeCount(sqlite: Database.Database, campaignId: string, f: CatalogueFilter): { total: number; campaignTotal: number } {
  // From the summary bins when they answer the filter exactly (bins.ts): a few thousand cells.
  if (binsAnswer(sqlite, campaignId, f)) return { total: totalOf(binnedCells(sqlite, campaignId, f)), campaignTotal: binnedCampaignTotal(sqlite, campaignId) };
  const count = (g: CatalogueFilter): number => {
    const params: Params = { campaign: campaignId };
    const where = ['f.campaign_id = @campaign', 'f.is_current = 1', ...filterSql(g, params, { flagsFromIndex: true })];
    let text: string;
    if (g.starPrefix) text = `SELECT count(*) AS n FROM ${STARS_THEN_RESULTS} WHERE s.campaign_id = @campaign AND f.star_id = s.id AND ${where.join(' AND ')}`;
    else if (g.flag && !g.flagAbsent) {
      // From the flag's rows in the flag index, each result read by its key: a rare flag is cheap.
      params.code = g.flag;
      const rest = where.filter((w) => !w.includes('fit_result_flags'));
      text = `SELECT count(*) AS n FROM fit_result_flags g INDEXED BY fit_result_flags_teff_idx CROSS JOIN fit_results f WHERE g.campaign_id = @campaign AND g.code = @code AND f.id = g.fit_result_id AND ${rest.join(' AND ')}`;
    } else text = `SELECT count(*) AS n FROM ${SUMMARY_INDEX} WHERE ${where.join(' AND ')}`;
    return (prepared(sqlite, text).get(params) as { n: number }).n;
  };
  // "Without flag X" = all that match the rest − those with X: two index reads instead of a probe per row.
  const total = f.flag && f.flagAbsent && !f.starPrefix ? count({ ...f, flag: undefined, flagAbsent: undefined }) - count({ ...f, flagAbsent: false }) : count(f);
  const campaignTotal = (
    prepared(sqlite, 'SELECT count(*) AS n FROM fit_results INDEXED BY fit_results_current_review_idx WHERE campaign_id = ? AND is_current = 1').get(campaignId) as { n: number }
  ).n;
  return { total, campaignTotal };
}
