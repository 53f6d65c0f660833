// The catalogue of a campaign: each star's current result (fit_results.is_current, kept by a
// trigger: its newest successful fit, else its newest failure) with its review status. Pages are
// read by keyset on (sort value, fit id) through the partial indexes of drizzle/0005, so a page
// costs the same on page 1 and page 20 000. Missing values (no parallax → no radius) sort last in
// both directions. The same filter drives the table, the diagrams and the downloads.
import type Database from 'better-sqlite3';
import type { AppDatabase, DbOrTx } from '../../db/client';
import type { CataloguePage, CatalogueRowView, CatalogueSort } from '../../contracts/catalogue';
import { HttpError } from '../errors';
import { staleChecker } from '../stale';
import type { CatalogueFilter, CataloguePageRequest } from './filter';

/**
 * A filter that leaves fewer rows than smallSet is read from its own index and sorted in memory.
 * Tests set it to 0 to walk the index-ordered plans on a small catalogue.
 */
export const catalogueTuning = { smallSet: 4_000 };

export type Params = Record<string, string | number>;

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
  f.ok AS ok, f.teff_k AS teffK, f.teff_err_k AS teffErrK, f.teff_lower_k AS teffLowerK, f.tbb_k AS tbbK, f.theta_mas AS thetaMas,
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
