// The catalogue of a campaign: each star's current result (fit_results.is_current, kept by a
// trigger: its newest successful fit, else its newest failure) with its review status. Pages are
// read by keyset on (sort value, fit id) through the partial indexes of drizzle/0005, so a page
// costs the same on page 1 and page 20 000. Missing values (no parallax → no radius) sort last in
// both directions. The same filter drives the table, the diagrams and the downloads.
import type Database from 'better-sqlite3';
import { z } from 'zod';
import type { AppDatabase, DbOrTx } from '../db/client';
import { FLAG_EXPLANATIONS } from '../core/fit';
import { HttpError } from './errors';
import { staleChecker } from './stale';
import { parseInput } from './validation';
import { CATALOGUE_SORTS, CATALOGUE_STATUSES, type CatalogueDiagrams, type CataloguePage, type CatalogueRowView, type CatalogueSort, type CatalogueStatus, type DiagramPoint } from '../contracts/catalogue';

export { CATALOGUE_SORTS, CATALOGUE_STATUSES };
export type { CatalogueDiagrams, CataloguePage, CatalogueRowView, CatalogueSort, CatalogueStatus, DensityGrid, DiagramPoint } from '../contracts/catalogue';

export const FLAG_CODES = Object.keys(FLAG_EXPLANATIONS);

export const DEFAULT_PAGE_SIZE = 50;
export const MAX_PAGE_SIZE = 500;
/** Above this many points the temperature–luminosity diagram is sent as a 2-D histogram. */
export const DIAGRAM_POINT_LIMIT = 20_000;
/**
 * A filter that leaves fewer rows than smallSet is read from its own index and sorted in memory.
 * Tests set it to 0 to walk the index-ordered plans on a small catalogue.
 */
export const catalogueTuning = { smallSet: 4_000 };

export interface CatalogueFilter {
  status?: CatalogueStatus[];
  teffMinK?: number;
  teffMaxK?: number;
  chi2Max?: number;
  flag?: string;
  /** Rows without `flag` instead of with it. */
  flagAbsent?: boolean;
  /** Star ids starting with this text (case-sensitive, as the input tables give them). */
  starPrefix?: string;
}

export interface CataloguePageRequest extends CatalogueFilter {
  sort: CatalogueSort;
  dir: 'asc' | 'desc';
  limit: number;
  /** Rows after this position (from a previous page's nextCursor). */
  after?: string;
  /** Rows before this position (from a previous page's prevCursor). */
  before?: string;
}

// ---------------------------------------------------------------------------------------------
// Input: the query string of GET /api/campaigns/:id/catalogue (and the downloads, diagrams).

const optionalNumber = (name: string) =>
  z
    .string()
    .optional()
    .transform((s, ctx) => {
      if (s === undefined || s.trim() === '') return undefined;
      const n = Number(s);
      if (!Number.isFinite(n)) {
        ctx.addIssue({ code: 'custom', message: `${name} must be a number, got "${s}".` });
        return z.NEVER;
      }
      return n;
    });

const filterShape = {
  status: z
    .string()
    .optional()
    .transform((s, ctx) => {
      if (s === undefined || s === '' || s === 'all') return undefined;
      const list = s.split(',').map((x) => x.trim()).filter(Boolean);
      const bad = list.filter((x) => !(CATALOGUE_STATUSES as readonly string[]).includes(x));
      if (bad.length) {
        ctx.addIssue({ code: 'custom', message: `status: "${bad[0]}" is not a review status; use ${CATALOGUE_STATUSES.join(', ')} (comma-separated) or all.` });
        return z.NEVER;
      }
      return [...new Set(list)] as CatalogueStatus[];
    }),
  teffMin: optionalNumber('teffMin'),
  teffMax: optionalNumber('teffMax'),
  chi2Max: optionalNumber('chi2Max'),
  flag: z
    .string()
    .optional()
    .refine((f) => !f || FLAG_CODES.includes(f), { message: `flag must be one of ${FLAG_CODES.join(', ')}.` }),
  flagAbsent: z.enum(['0', '1', 'true', 'false']).optional(),
  q: z.string().max(200, 'q (star id prefix) can have at most 200 characters.').optional(),
};

const pageShape = z.object({
  ...filterShape,
  sort: z.enum(CATALOGUE_SORTS, `sort must be one of ${CATALOGUE_SORTS.join(', ')}.`).default('teff_k'),
  dir: z.enum(['asc', 'desc'], 'dir must be asc or desc.').default('asc'),
  limit: optionalNumber('limit'),
  after: z.string().max(2000).optional(),
  before: z.string().max(2000).optional(),
});

function toFilter(p: { status?: CatalogueStatus[]; teffMin?: number; teffMax?: number; chi2Max?: number; flag?: string; flagAbsent?: string; q?: string }): CatalogueFilter {
  const f: CatalogueFilter = {};
  if (p.status) f.status = p.status;
  if (p.teffMin !== undefined) f.teffMinK = p.teffMin;
  if (p.teffMax !== undefined) f.teffMaxK = p.teffMax;
  if (p.chi2Max !== undefined) f.chi2Max = p.chi2Max;
  if (p.flag) {
    f.flag = p.flag;
    f.flagAbsent = p.flagAbsent === '1' || p.flagAbsent === 'true';
  }
  if (p.q && p.q.trim() !== '') f.starPrefix = p.q.trim();
  return f;
}

const paramsObject = (params: URLSearchParams) => Object.fromEntries([...params.entries()]);

export function parseCatalogueFilter(params: URLSearchParams): CatalogueFilter {
  return toFilter(parseInput(z.object(filterShape), paramsObject(params)));
}

export function parseCataloguePageRequest(params: URLSearchParams): CataloguePageRequest {
  const p = parseInput(pageShape, paramsObject(params));
  const limit = p.limit ?? DEFAULT_PAGE_SIZE;
  if (!Number.isInteger(limit) || limit < 1 || limit > MAX_PAGE_SIZE) {
    throw new HttpError('validation_failed', `limit must be a whole number from 1 to ${MAX_PAGE_SIZE}.`, 'limit');
  }
  if (p.after && p.before) throw new HttpError('validation_failed', 'Give after or before, not both.', 'before');
  return { ...toFilter(p), sort: p.sort, dir: p.dir, limit, after: p.after, before: p.before };
}

/** The filter as query-string parameters (for download links and release records). */
export function filterToParams(f: CatalogueFilter): URLSearchParams {
  const p = new URLSearchParams();
  p.set('status', f.status && f.status.length ? f.status.join(',') : 'all');
  if (f.teffMinK !== undefined) p.set('teffMin', String(f.teffMinK));
  if (f.teffMaxK !== undefined) p.set('teffMax', String(f.teffMaxK));
  if (f.chi2Max !== undefined) p.set('chi2Max', String(f.chi2Max));
  if (f.flag) {
    p.set('flag', f.flag);
    if (f.flagAbsent) p.set('flagAbsent', '1');
  }
  if (f.starPrefix) p.set('q', f.starPrefix);
  return p;
}

/** A short plain-words description of a filter (provenance headers, release notes). */
export function describeFilter(f: CatalogueFilter): string {
  const parts: string[] = [];
  parts.push(f.status && f.status.length ? `review status ${f.status.join(' or ')}` : 'any review status');
  if (f.teffMinK !== undefined) parts.push(`Teff ≥ ${f.teffMinK} K`);
  if (f.teffMaxK !== undefined) parts.push(`Teff ≤ ${f.teffMaxK} K`);
  if (f.chi2Max !== undefined) parts.push(`reduced χ² ≤ ${f.chi2Max}`);
  if (f.flag) parts.push(f.flagAbsent ? `without flag ${f.flag}` : `with flag ${f.flag}`);
  if (f.starPrefix) parts.push(`star id starting with "${f.starPrefix}"`);
  return parts.join('; ');
}

// ---------------------------------------------------------------------------------------------
// SQL

type Params = Record<string, string | number>;

const SORT_SQL: Record<CatalogueSort, { col: string; nullable: boolean; index?: string; flagIndex?: string }> = {
  teff_k: { col: 'teff_k', nullable: true, index: 'fit_results_current_teff_idx', flagIndex: 'fit_result_flags_teff_idx' },
  lum_lsun: { col: 'lum_lsun', nullable: true, index: 'fit_results_current_lum_idx', flagIndex: 'fit_result_flags_lum_idx' },
  radius_rsun: { col: 'radius_rsun', nullable: true, index: 'fit_results_current_radius_idx', flagIndex: 'fit_result_flags_radius_idx' },
  chi2_red: { col: 'chi2_red', nullable: true, index: 'fit_results_current_chi2_idx', flagIndex: 'fit_result_flags_chi2_idx' },
  review_status: { col: 'review_status', nullable: false, index: 'fit_results_current_review_idx' },
  star_key: { col: 'star_key', nullable: false, flagIndex: 'fit_result_flags_star_idx' },
};

/** Bytes after every string that starts with the prefix (UTF-8 order = SQLite's BINARY order). */
const PREFIX_END = '\u{10FFFF}';

/** WHERE terms (beyond campaign and is_current) for a filter, with their parameters. */
export function filterSql(f: CatalogueFilter, params: Params, o: { flagsFromIndex?: boolean } = {}): string[] {
  const where: string[] = [];
  if (f.status && f.status.length) {
    where.push(`f.review_status IN (${f.status.map((s, i) => ((params[`st${i}`] = s), `@st${i}`)).join(', ')})`);
  }
  if (f.teffMinK !== undefined) {
    params.teffMin = f.teffMinK;
    where.push('f.teff_k >= @teffMin');
  }
  if (f.teffMaxK !== undefined) {
    params.teffMax = f.teffMaxK;
    where.push('f.teff_k <= @teffMax');
  }
  if (f.chi2Max !== undefined) {
    params.chi2Max = f.chi2Max;
    where.push('f.chi2_red <= @chi2Max');
  }
  if (f.flag && o.flagsFromIndex) {
    // The flag index holds the flags of current results, so a whole-campaign scan probes its
    // primary key instead of reading each result row for its flags text.
    params.flagCode = f.flag;
    where.push(`${f.flagAbsent ? 'NOT ' : ''}EXISTS (SELECT 1 FROM fit_result_flags g WHERE g.fit_result_id = f.id AND g.code = @flagCode)`);
  } else if (f.flag) {
    params.flag = ` ${f.flag} `;
    where.push(`instr(' ' || f.flags || ' ', @flag) ${f.flagAbsent ? '=' : '>'} 0`);
  }
  if (f.starPrefix) {
    params.pfx = f.starPrefix;
    params.pfxEnd = f.starPrefix + PREFIX_END;
    where.push('s.star_key >= @pfx AND s.star_key < @pfxEnd');
  }
  return where;
}

/** Stars by key, then each one's current result (index hints: see plan()). */
export const STARS_THEN_RESULTS = 'stars s INDEXED BY stars_campaign_key_unique CROSS JOIN fit_results f INDEXED BY fit_results_current_star_idx';

const statementCache = new WeakMap<Database.Database, Map<string, Database.Statement>>();

export function prepared(sqlite: Database.Database, text: string): Database.Statement {
  let m = statementCache.get(sqlite);
  if (!m) statementCache.set(sqlite, (m = new Map()));
  let s = m.get(text);
  if (!s) {
    s = sqlite.prepare(text);
    m.set(text, s);
  }
  return s;
}

const ROW_COLUMNS = `f.id AS fitId, f.star_id AS starId, s.star_key AS starKey, s.ra_deg AS raDeg, s.dec_deg AS decDeg,
  f.ok AS ok, f.teff_k AS teffK, f.teff_err_k AS teffErrK, f.teff_lower_k AS teffLowerK, f.theta_mas AS thetaMas,
  f.radius_rsun AS radiusRsun, f.radius_err_rsun AS radiusErrRsun, f.lum_lsun AS lumLsun, f.lum_err_lsun AS lumErrLsun,
  f.av_mag AS avMag, f.chi2_red AS chi2Red, f.n_bands AS nBands, f.flags AS flags, f.review_status AS reviewStatus,
  f.batch_id AS batchId, f.band_library_version AS bandLibraryVersion, f.bands_used AS bandsUsed`;

interface Cursor {
  /** 'v': among rows with a value; 'n': among rows without one (they come last). */
  p: 'v' | 'n';
  v?: string | number;
  i: number;
}

function encodeCursor(c: Cursor): string {
  return Buffer.from(JSON.stringify(c)).toString('base64url');
}

function decodeCursor(s: string, sort: CatalogueSort): Cursor {
  try {
    const c = JSON.parse(Buffer.from(s, 'base64url').toString('utf8')) as Cursor;
    const valueOk = c.p === 'n' || (sort === 'star_key' || sort === 'review_status' ? typeof c.v === 'string' : typeof c.v === 'number');
    if ((c.p === 'v' || c.p === 'n') && Number.isInteger(c.i) && valueOk) return c;
  } catch {
    // fall through
  }
  throw new HttpError('validation_failed', 'The page cursor is not valid for this sort; start again from the first page.', 'after');
}

function sortValue(row: CatalogueRowView, sort: CatalogueSort): string | number | null {
  switch (sort) {
    case 'teff_k':
      return row.teffK;
    case 'lum_lsun':
      return row.lumLsun;
    case 'radius_rsun':
      return row.radiusRsun;
    case 'chi2_red':
      return row.chi2Red;
    case 'star_key':
      return row.starKey;
    case 'review_status':
      return row.reviewStatus;
  }
}

function cursorOf(row: CatalogueRowView, sort: CatalogueSort): string {
  const v = sortValue(row, sort);
  return encodeCursor(v === null ? { p: 'n', i: row.fitId } : { p: 'v', v, i: row.fitId });
}

interface Plan {
  from: string;
  where: string[];
  params: Params;
  /** The sort column and the id as this plan's tables name them. */
  col: string;
  id: string;
  /** Read from a small set and sort in memory (no index hint on the sort). */
  small: boolean;
}

/** Counts rows matching one indexed condition, stopping at SMALL_SET (cheap on its own index). */
function cappedCount(sqlite: Database.Database, text: string, params: Params): number {
  return (prepared(sqlite, `SELECT count(*) AS n FROM (${text} LIMIT ${catalogueTuning.smallSet})`).get(params) as { n: number }).n;
}

/**
 * Picks the way to read. Normally in sort order straight from the sort's index, stopping after one
 * page. When one selective condition (star id prefix, Teff range, a rare review status) leaves only
 * a few thousand rows: from that condition's index with an in-memory sort. With "flag present": from
 * the flag index (fit_result_flags), which keeps the sort values beside each flag, in sort order.
 * So a narrow filter never walks the whole campaign.
 */
function plan(sqlite: Database.Database, campaignId: string, f: CatalogueFilter, sort: CatalogueSort): Plan {
  const params: Params = { campaign: campaignId };
  const where = ['f.campaign_id = @campaign', 'f.is_current = 1', ...filterSql(f, params)];
  const s = SORT_SQL[sort];
  const fcol = sort === 'star_key' ? 's.star_key' : `f.${s.col}`;
  const byStars = (small: boolean): Plan => ({
    // Both index hints matter: without table statistics SQLite would probe each star's result
    // through the (campaign, review status) index, which is two equalities but not selective.
    from: 'stars s INDEXED BY stars_campaign_key_unique CROSS JOIN fit_results f INDEXED BY fit_results_current_star_idx',
    where: ['s.campaign_id = @campaign', 'f.star_id = s.id', ...where],
    params,
    col: fcol,
    id: 'f.id',
    small,
  });
  const forced = (index: string, small: boolean): Plan => ({ from: `fit_results f INDEXED BY ${index} JOIN stars s ON s.id = f.star_id`, where, params, col: fcol, id: 'f.id', small });
  const byFlag = (small: boolean): Plan => ({
    from: `fit_result_flags g${small || !s.flagIndex ? '' : ` INDEXED BY ${s.flagIndex}`} CROSS JOIN fit_results f CROSS JOIN stars s`,
    where: ['g.campaign_id = @campaign', 'g.code = @code', 'f.id = g.fit_result_id', 's.id = f.star_id', ...where],
    params: { ...params, code: f.flag! },
    col: small || !s.flagIndex ? fcol : `g.${s.col}`,
    id: small || !s.flagIndex ? 'f.id' : 'g.fit_result_id',
    small,
  });

  if (f.starPrefix) {
    const n = cappedCount(sqlite, 'SELECT 1 FROM stars WHERE campaign_id = @campaign AND star_key >= @pfx AND star_key < @pfxEnd', { campaign: campaignId, pfx: params.pfx, pfxEnd: params.pfxEnd });
    if (n < catalogueTuning.smallSet) return byStars(true);
  }
  if (sort !== 'teff_k' && (f.teffMinK !== undefined || f.teffMaxK !== undefined)) {
    const range: Params = { campaign: campaignId, lo: f.teffMinK ?? -1e308, hi: f.teffMaxK ?? 1e308 };
    const n = cappedCount(sqlite, 'SELECT 1 FROM fit_results INDEXED BY fit_results_current_teff_idx WHERE campaign_id = @campaign AND is_current = 1 AND teff_k BETWEEN @lo AND @hi', range);
    if (n < catalogueTuning.smallSet) return forced('fit_results_current_teff_idx', true);
  }
  if (sort !== 'review_status' && f.status && f.status.length) {
    const st: Params = { campaign: campaignId };
    const list = f.status.map((x, i) => ((st[`s${i}`] = x), `@s${i}`)).join(', ');
    const n = cappedCount(sqlite, `SELECT 1 FROM fit_results INDEXED BY fit_results_current_review_idx WHERE campaign_id = @campaign AND is_current = 1 AND review_status IN (${list})`, st);
    if (n < catalogueTuning.smallSet) return forced('fit_results_current_review_idx', true);
  }
  if (f.flag && !f.flagAbsent) {
    if (s.flagIndex) return byFlag(false);
    const n = cappedCount(sqlite, 'SELECT 1 FROM fit_result_flags WHERE campaign_id = @campaign AND code = @code', { campaign: campaignId, code: f.flag });
    if (n < catalogueTuning.smallSet) return byFlag(true);
  }
  if (sort === 'star_key') return byStars(false);
  return forced(s.index!, false);
}

/**
 * One step of the walk in display order: rows with a value in (value, id) order (direction `dir`),
 * then rows without one by id. `reverse` walks backwards (for "previous page").
 */
function readPhase(
  sqlite: Database.Database,
  p: Plan,
  sort: CatalogueSort,
  dir: 'asc' | 'desc',
  phase: 'v' | 'n',
  from: Cursor | null,
  reverse: boolean,
  limit: number,
): CatalogueRowView[] {
  const s = SORT_SQL[sort];
  const params: Params = { ...p.params };
  const where = [...p.where];
  // A unary + keeps SQLite from walking the sort's index when the plan is to read a small set and sort it.
  const key = p.small ? `+${p.col}` : p.col;
  const id = p.small ? `+${p.id}` : p.id;
  let order: string;
  if (phase === 'v') {
    const ascending = (dir === 'asc') !== reverse;
    if (s.nullable) where.push(`${p.col} IS NOT NULL`);
    let cursor = from && from.p === 'v' ? from : null;
    if (sort === 'teff_k' && !p.small) {
      // The Teff filter bounds the same index the walk uses. SQLite takes one lower and one upper
      // bound per column, so give it only the tighter one of filter bound and cursor (else a cursor
      // far outside the filter's range walks everything in between).
      const lo = params.teffMin as number | undefined;
      const hi = params.teffMax as number | undefined;
      const filterTerms = new Set(['f.teff_k >= @teffMin', 'f.teff_k <= @teffMax']);
      for (let i = where.length - 1; i >= 0; i--) if (filterTerms.has(where[i])) where.splice(i, 1);
      const cv = cursor ? Number(cursor.v) : undefined;
      if (cursor && ascending && lo !== undefined && cv! < lo) cursor = null;
      if (cursor && !ascending && hi !== undefined && cv! > hi) cursor = null;
      if (lo !== undefined && !(cursor && ascending)) where.push(`${p.col} >= @teffMin`);
      if (hi !== undefined && !(cursor && !ascending)) where.push(`${p.col} <= @teffMax`);
    }
    if (sort === 'star_key' && !p.small && params.pfx !== undefined) {
      // Same for a star id prefix under the star-id sort: the prefix range and the cursor bound the
      // same index; keep only the tighter bound on each side.
      const lo = String(params.pfx);
      const hi = String(params.pfxEnd);
      const i = where.indexOf('s.star_key >= @pfx AND s.star_key < @pfxEnd');
      if (i >= 0) where.splice(i, 1);
      const cv = cursor ? String(cursor.v) : undefined;
      if (cursor && ascending && cv! < lo) cursor = null;
      if (cursor && !ascending && cv! >= hi) cursor = null;
      if (!(cursor && ascending)) where.push(`${p.col} >= @pfx`);
      if (!(cursor && !ascending)) where.push(`${p.col} < @pfxEnd`);
      if (p.col !== 's.star_key') where.push('s.star_key >= @pfx AND s.star_key < @pfxEnd');
    }
    if (cursor) {
      const from = cursor;
      params.cv = from.v!;
      params.ci = from.i;
      if (sort === 'review_status' && !p.small) {
        // Few values, many ties: SQLite would range-scan on the status alone and skip ties one by
        // one, so read the rest of the cursor's status, then the statuses after it.
        const op = ascending ? '>' : '<';
        const tie = readWhere(sqlite, p, [...where, `${p.col} = @cv`, `${p.id} ${op} @ci`], params, `${id} ${ascending ? 'ASC' : 'DESC'}`, limit);
        if (tie.length >= limit) return tie;
        const o = ascending ? 'ASC' : 'DESC';
        return tie.concat(readWhere(sqlite, p, [...where, `${p.col} ${op} @cv`], params, `${key} ${o}, ${id} ${o}`, limit - tie.length));
      }
      where.push(`(${p.col}, ${p.id}) ${ascending ? '>' : '<'} (@cv, @ci)`);
    }
    const o = ascending ? 'ASC' : 'DESC';
    order = `${key} ${o}, ${id} ${o}`;
  } else {
    where.push(`${p.col} IS NULL`);
    if (from && from.p === 'n') {
      params.ci = from.i;
      where.push(`${p.id} ${reverse ? '<' : '>'} @ci`);
    }
    order = `${id} ${reverse ? 'DESC' : 'ASC'}`;
  }
  return readWhere(sqlite, p, where, params, order, limit);
}

function readWhere(sqlite: Database.Database, p: Plan, where: string[], params: Params, order: string, limit: number): CatalogueRowView[] {
  const text = `SELECT ${ROW_COLUMNS} FROM ${p.from} WHERE ${where.join(' AND ')} ORDER BY ${order} LIMIT ${limit}`;
  const rows = prepared(sqlite, text).all(params) as (Omit<CatalogueRowView, 'ok' | 'stale'> & { ok: number })[];
  return rows.map((r) => ({ ...r, ok: r.ok === 1, stale: false }));
}

/** One page of a campaign's catalogue, each row marked stale or not. */
export function cataloguePage(db: DbOrTx, campaignId: string, req: CataloguePageRequest): CataloguePage {
  const page = readCataloguePage(db, campaignId, req);
  const isStale = staleChecker(db as AppDatabase);
  for (const r of page.rows) r.stale = r.ok && isStale(r);
  return page;
}

function readCataloguePage(db: DbOrTx, campaignId: string, req: CataloguePageRequest): CataloguePage {
  const sqlite = (db as unknown as { $client: Database.Database }).$client;
  const p = plan(sqlite, campaignId, req, req.sort);
  const nullable = SORT_SQL[req.sort].nullable;
  const want = req.limit + 1;
  if (req.before) {
    const c = decodeCursor(req.before, req.sort);
    let rows = readPhase(sqlite, p, req.sort, req.dir, c.p, c, true, want);
    if (c.p === 'n' && rows.length < want) rows = rows.concat(readPhase(sqlite, p, req.sort, req.dir, 'v', null, true, want - rows.length));
    const more = rows.length > req.limit;
    const page = rows.slice(0, req.limit).reverse();
    return {
      rows: page,
      prevCursor: more && page.length ? cursorOf(page[0], req.sort) : null,
      nextCursor: page.length ? cursorOf(page[page.length - 1], req.sort) : null,
    };
  }
  const c = req.after ? decodeCursor(req.after, req.sort) : null;
  let rows = readPhase(sqlite, p, req.sort, req.dir, c?.p ?? 'v', c, false, want);
  if (nullable && (c?.p ?? 'v') === 'v' && rows.length < want) rows = rows.concat(readPhase(sqlite, p, req.sort, req.dir, 'n', null, false, want - rows.length));
  const more = rows.length > req.limit;
  const page = rows.slice(0, req.limit);
  return {
    rows: page,
    nextCursor: more ? cursorOf(page[page.length - 1], req.sort) : null,
    prevCursor: c && page.length ? cursorOf(page[0], req.sort) : null,
  };
}

// ---------------------------------------------------------------------------------------------
// Totals and diagrams read every matching row, so they are kept per database, campaign and filter
// under the campaign's stamp (catalogue_versions, raised by triggers on every result insert, review
// decision, change of current result or deletion: drizzle/0008). A stamp lookup is one primary-key
// read, so a repeated request costs nothing and a stale answer is never served, even when another
// process (the worker) wrote the change.

const SUMMARY_CACHE_ENTRIES = 256;
const summaryCaches = new WeakMap<Database.Database, Map<string, { version: number; value: unknown }>>();
/** Hits and misses since start (tests and the bench read them). */
export const catalogueSummaryStats = { hits: 0, misses: 0 };

/** The campaign's catalogue stamp (0 before its first result). */
export function catalogueVersion(sqlite: Database.Database, campaignId: string): number {
  const row = prepared(sqlite, 'SELECT version FROM catalogue_versions WHERE campaign_id = ?').get(campaignId) as { version: number } | undefined;
  return row?.version ?? 0;
}

function cachedSummary<T>(sqlite: Database.Database, campaignId: string, key: string, compute: () => T): T {
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
function filterKey(f: CatalogueFilter): string {
  return filterToParams(f).toString();
}

/** How many rows a filter leaves (a separate request: it reads every matching row; cached per stamp). */
export function catalogueCount(db: DbOrTx, campaignId: string, f: CatalogueFilter): { total: number; campaignTotal: number } {
  const sqlite = (db as unknown as { $client: Database.Database }).$client;
  return cachedSummary(sqlite, campaignId, `count?${filterKey(f)}`, () => computeCount(sqlite, campaignId, f));
}

/** Index that holds every column a filter without star prefix or flag needs (no row reads). */
const SUMMARY_INDEX = 'fit_results f INDEXED BY fit_results_current_summary_idx';

function computeCount(sqlite: Database.Database, campaignId: string, f: CatalogueFilter): { total: number; campaignTotal: number } {
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

// ---------------------------------------------------------------------------------------------
// Diagrams: temperature–luminosity and the temperature histogram.

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
