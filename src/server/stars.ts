// A campaign's stars, one page at a time: each with its measurement count and current fit. Pages
// are keyset on star_key (the unique index stars_campaign_key_unique on campaign_id, star_key), so
// page 4 000 of a few hundred thousand stars costs what page 1 does; OFFSET would read every row
// before it.
import type { AppDatabase } from '../db/client';
import { HttpError } from './errors';

export const STARS_PAGE_SIZE = 100;
const MAX_PAGE_SIZE = 500;

export interface StarListRow {
  id: number;
  starKey: string;
  raDeg: number | null;
  decDeg: number | null;
  parallaxMas: number | null;
  measurementCount: number;
  /** The star's current result (its newest successful fit, else its newest failure); null before any batch. */
  fit: {
    ok: boolean;
    teffK: number | null;
    teffErrK: number | null;
    teffLowerK: number | null;
    failureReason: string | null;
    reviewStatus: string;
    flags: string;
    createdAt: string;
  } | null;
}

export interface StarListRequest {
  /** Stars whose key starts with this (case-sensitive, as star keys are). */
  prefix: string;
  /** Show the page after this key … */
  after: string | null;
  /** … or the page before this key (at most one of the two). */
  before: string | null;
  limit: number;
}

export interface StarListPage {
  rows: StarListRow[];
  /** Stars matching the prefix (all pages). */
  total: number;
  /** Key to pass as `after` for the next page; null on the last page. */
  nextAfter: string | null;
  /** Key to pass as `before` for the previous page; null on the first page. */
  prevBefore: string | null;
}

/** Reads ?q=&after=&before=&limit= with clear messages for bad values. */
export function parseStarListRequest(params: URLSearchParams): StarListRequest {
  const after = params.get('after');
  const before = params.get('before');
  if (after !== null && before !== null) throw new HttpError('validation_failed', 'Give either after or before, not both.', 'before');
  const rawLimit = params.get('limit');
  let limit = STARS_PAGE_SIZE;
  if (rawLimit !== null && rawLimit !== '') {
    limit = Number(rawLimit);
    if (!Number.isInteger(limit) || limit < 1 || limit > MAX_PAGE_SIZE) {
      throw new HttpError('validation_failed', `limit must be a whole number from 1 to ${MAX_PAGE_SIZE}; got "${rawLimit}".`, 'limit');
    }
  }
  return { prefix: (params.get('q') ?? '').trim(), after: after || null, before: before || null, limit };
}

// The highest code point: every key that starts with the prefix sorts below prefix + this one
// (SQLite compares TEXT bytewise under BINARY collation, and U+10FFFF is F4 8F BF BF in UTF-8).
const TOP = String.fromCodePoint(0x10ffff);

interface RawRow {
  id: number;
  star_key: string;
  ra_deg: number | null;
  dec_deg: number | null;
  parallax_mas: number | null;
  n_meas: number;
  fit_ok: number | null;
  teff_k: number | null;
  teff_err_k: number | null;
  teff_lower_k: number | null;
  failure_reason: string | null;
  review_status: string | null;
  flags: string | null;
  fit_created_at: number | null;
}

/** The page query (exported so a test can check its plan walks the index). */
export function starPageSql(from: 'first' | 'after' | 'before'): string {
  const bound = from === 'before' ? 'AND s.star_key < @key' : from === 'after' ? 'AND s.star_key > @key' : '';
  // One more row than the page tells whether there is a page beyond it in the direction read.
  return `SELECT s.id, s.star_key, s.ra_deg, s.dec_deg, s.parallax_mas,
              (SELECT count(*) FROM measurements m WHERE m.star_id = s.id) AS n_meas,
              r.ok AS fit_ok, r.teff_k, r.teff_err_k, r.teff_lower_k, r.failure_reason, r.review_status, r.flags,
              r.created_at AS fit_created_at
       FROM stars s
       LEFT JOIN fit_results r ON r.id = (SELECT id FROM fit_results WHERE star_id = s.id AND is_current = 1 ORDER BY id DESC LIMIT 1)
       WHERE s.campaign_id = @campaignId AND s.star_key >= @lo AND s.star_key < @hi ${bound}
       ORDER BY s.star_key ${from === 'before' ? 'DESC' : 'ASC'}
       LIMIT @limit`;
}

export function listStars(db: AppDatabase, campaignId: string, req: StarListRequest): StarListPage {
  const sqlite = db.$client;
  const lo = req.prefix;
  const hi = req.prefix + TOP;
  const total = sqlite.prepare('SELECT count(*) FROM stars WHERE campaign_id = ? AND star_key >= ? AND star_key < ?').pluck().get(campaignId, lo, hi) as number;

  const backwards = req.before !== null;
  const raw = sqlite
    .prepare(starPageSql(backwards ? 'before' : req.after !== null ? 'after' : 'first'))
    .all({ campaignId, lo, hi, key: req.before ?? req.after, limit: req.limit + 1 }) as RawRow[];
  const more = raw.length > req.limit;
  const page = raw.slice(0, req.limit);
  if (backwards) page.reverse();
  const rows = page.map(
    (r): StarListRow => ({
      id: r.id,
      starKey: r.star_key,
      raDeg: r.ra_deg,
      decDeg: r.dec_deg,
      parallaxMas: r.parallax_mas,
      measurementCount: r.n_meas,
      fit:
        r.fit_ok === null
          ? null
          : {
              ok: r.fit_ok === 1,
              teffK: r.teff_k,
              teffErrK: r.teff_err_k,
              teffLowerK: r.teff_lower_k,
              failureReason: r.failure_reason,
              reviewStatus: r.review_status ?? 'pending',
              flags: r.flags ?? '',
              createdAt: new Date(r.fit_created_at ?? 0).toISOString(),
            },
    }),
  );
  const first = rows[0]?.starKey ?? null;
  const last = rows[rows.length - 1]?.starKey ?? null;
  // Reading forwards from some key, that key's star lies before this page; reading backwards from
  // some key, that key's star lies after it.
  const hasNext = backwards ? true : more;
  const hasPrev = backwards ? more : req.after !== null;
  return {
    rows,
    total,
    nextAfter: hasNext && last !== null ? last : null,
    prevBefore: hasPrev && first !== null ? first : null,
  };
}
