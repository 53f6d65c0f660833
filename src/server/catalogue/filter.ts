// The catalogue filter: what a query may ask for (status, temperature range, reduced χ², flag, star-id
// prefix), its validation, its query-string form (download links, release records, cache keys) and
// its plain-words description. The same filter drives the table, the diagrams and the downloads.
import { z } from 'zod';
import { FLAG_EXPLANATIONS } from '../../core/fit';
import { CATALOGUE_SORTS, CATALOGUE_STATUSES, type CatalogueSort, type CatalogueStatus } from '../../contracts/catalogue';
import { HttpError } from '../errors';
import { parseInput } from '../validation';

export const FLAG_CODES = Object.keys(FLAG_EXPLANATIONS);

export const DEFAULT_PAGE_SIZE = 50;
export const MAX_PAGE_SIZE = 500;

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

// Input: the parameters of GET /api/campaigns/:id/catalogue (and the downloads, diagrams).

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

/** The catalogue filter from a query's parameters as an object (the web layer reads them from the request URL). */
export function catalogueFilterInput(query: Record<string, string>): CatalogueFilter {
  return toFilter(parseInput(z.object(filterShape), query));
}

/** A page request (filter, sort, direction, page size, cursor) from a query's parameters as an object. */
export function cataloguePageInput(query: Record<string, string>): CataloguePageRequest {
  const p = parseInput(pageShape, query);
  const limit = p.limit ?? DEFAULT_PAGE_SIZE;
  if (!Number.isInteger(limit) || limit < 1 || limit > MAX_PAGE_SIZE) {
    throw new HttpError('validation_failed', `limit must be a whole number from 1 to ${MAX_PAGE_SIZE}.`, 'limit');
  }
  if (p.after && p.before) throw new HttpError('validation_failed', 'Give after or before, not both.', 'before');
  return { ...toFilter(p), sort: p.sort, dir: p.dir, limit, after: p.after, before: p.before };
}

/**
 * A release records its selection as the catalogue's query string (catalogue_releases.filter.query,
 * and the `query` field of a new release): this reads that stored text back into a filter.
 */
export function catalogueFilterFromQuery(query: string): CatalogueFilter {
  return catalogueFilterInput(paramsObject(new URLSearchParams(query)));
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
