// The catalogue table: TanStack Table over pages the server sorts, filters and cuts (keyset
// cursors), fetched through TanStack Query. Server-rendered with the first page in place; every
// control is also a plain link or GET form, so the table works without JavaScript and any view can
// be bookmarked. The download links carry the current filter.
import { QueryClientProvider } from '@tanstack/react-query';
import { createColumnHelper, flexRender, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import { useEffect, useMemo, useState, type MouseEvent, type SubmitEvent } from 'react';
import { FLAG_EXPLANATIONS } from '../../core/fit/flags';
import { ApiError } from '../../browser/api';
import {
  DOWNLOAD_FORMATS,
  FILTER_EVENT,
  FILTER_KEYS,
  downloadHref,
  filterQuery,
  useCatalogueCount,
  useCataloguePage,
  type CataloguePage,
  type CatalogueRowView,
  type CatalogueSort,
} from '../../browser/catalogue';
import { getQueryClient } from '../../browser/query-client';

interface Props {
  campaignId: string;
  /** The page's query string as the server read it (status defaults to accepted). */
  initialQuery: string;
  initialPage: CataloguePage;
  initialCount: { total: number; campaignTotal: number };
}

export default function CatalogueTable(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Table {...props} />
    </QueryClientProvider>
  );
}

const STATUS_WORDS: Record<string, string> = { accepted: 'accepted', pending: 'unreviewed', flagged: 'flagged' };
const STATUS_CLASS: Record<string, string> = {
  accepted: 'bg-moss-100 text-moss-700',
  pending: 'bg-paper-deep text-ink-600',
  flagged: 'bg-alarm-100 text-alarm-700',
};

function sig(v: number | null, digits = 3): string {
  if (v === null || !Number.isFinite(v)) return '';
  const a = Math.abs(v);
  if (a !== 0 && (a >= 1e5 || a < 1e-3)) return v.toExponential(digits - 1);
  return Number(v.toPrecision(digits)).toString();
}

function withError(v: number | null, err: number | null, digits = 3): string {
  if (v === null) return '';
  return err === null ? sig(v, digits) : `${sig(v, digits)} ± ${sig(err, 2)}`;
}

function withParams(query: string, set: Record<string, string | null>): string {
  const p = new URLSearchParams(query);
  for (const [k, v] of Object.entries(set)) {
    if (v === null || v === '') p.delete(k);
    else p.set(k, v);
  }
  return p.toString();
}

const col = createColumnHelper<CatalogueRowView>();

function Table({ campaignId, initialQuery, initialPage, initialCount }: Props) {
  const [query, setQuery] = useState(initialQuery);
  const page = useCataloguePage(campaignId, query, { query: initialQuery, page: initialPage });
  const count = useCatalogueCount(campaignId, query, { query: initialQuery, ...initialCount });
  const params = new URLSearchParams(query);
  const sort = (params.get('sort') ?? 'teff_k') as CatalogueSort;
  const dir = params.get('dir') === 'desc' ? 'desc' : 'asc';
  const data = page.data ?? initialPage;

  // Keep the address bar and the diagrams in step with the table.
  useEffect(() => {
    const url = new URL(window.location.href);
    url.search = query;
    window.history.replaceState(null, '', url);
    window.dispatchEvent(new CustomEvent(FILTER_EVENT, { detail: filterQuery(query) }));
  }, [query]);

  const go = (next: string) => (e: MouseEvent<HTMLAnchorElement>) => {
    if (e.metaKey || e.ctrlKey || e.shiftKey || e.button !== 0) return;
    e.preventDefault();
    setQuery(next);
  };

  const sortLink = (key: CatalogueSort) => withParams(query, { sort: key, dir: sort === key && dir === 'asc' ? 'desc' : 'asc', after: null, before: null });

  const columns = useMemo(
    () => [
      col.accessor('starKey', {
        id: 'star_key',
        header: 'Star',
        cell: (c) => (
          <a href={`/campaigns/${encodeURIComponent(campaignId)}/stars/${c.row.original.starId}`} className="font-mono">
            {c.getValue()}
          </a>
        ),
      }),
      col.accessor('teffK', {
        id: 'teff_k',
        header: 'Teff [K]',
        cell: (c) => {
          const r = c.row.original;
          if (r.teffK === null && r.teffLowerK !== null) return <span title="Only a lower bound: the photometry sits on the Rayleigh–Jeans tail">&gt; {sig(r.teffLowerK, 4)}</span>;
          return withError(r.teffK, r.teffErrK, 4);
        },
      }),
      col.accessor('tbbK', { id: 'tbb_k', header: () => <abbr title="Planck fit: a blackbody's colour temperature, not an effective temperature" className="no-underline">T<sub>bb</sub> [K]</abbr>, cell: (c) => sig(c.getValue(), 4) }),
      col.accessor('lumLsun', { id: 'lum_lsun', header: 'L [L☉]', cell: (c) => withError(c.getValue(), c.row.original.lumErrLsun) }),
      col.accessor('radiusRsun', { id: 'radius_rsun', header: 'R [R☉]', cell: (c) => withError(c.getValue(), c.row.original.radiusErrRsun) }),
      col.accessor('thetaMas', { id: 'theta_mas', header: 'θ [mas]', cell: (c) => sig(c.getValue()) }),
      col.accessor('avMag', { id: 'av', header: () => <>A<sub>V</sub></>, cell: (c) => sig(c.getValue(), 2) }),
      col.accessor('chi2Red', { id: 'chi2_red', header: () => <abbr title="reduced χ²" className="no-underline">χ²<sub>ν</sub></abbr>, cell: (c) => sig(c.getValue(), 3) }),
      col.accessor('nBands', { id: 'n_bands', header: 'Bands', cell: (c) => c.getValue() ?? '' }),
      col.accessor('flags', {
        id: 'flags',
        header: 'Flags',
        cell: (c) => (
          <span className="flex flex-wrap gap-1">
            {c.row.original.stale && (
              <span className="text-xs px-1.5 rounded bg-alarm-100 text-alarm-700 font-semibold" data-testid="stale-badge" title={`A band this fit used changed after band library ${c.row.original.bandLibraryVersion}; re-fit it from the batches page`}>
                stale
              </span>
            )}
            {c
              .getValue()
              .split(' ')
              .filter(Boolean)
              .map((f) => (
                <span key={f} className="text-xs px-1.5 rounded bg-ember-100 text-ember-800 font-mono" title={FLAG_EXPLANATIONS[f as keyof typeof FLAG_EXPLANATIONS] ?? f}>
                  {f}
                </span>
              ))}
          </span>
        ),
      }),
      col.accessor('reviewStatus', {
        id: 'review_status',
        header: 'Review',
        cell: (c) => <span className={`text-xs font-semibold px-2 py-0.5 rounded-full ${STATUS_CLASS[c.getValue()] ?? ''}`}>{STATUS_WORDS[c.getValue()] ?? c.getValue()}</span>,
      }),
    ],
    [campaignId],
  );

  const table = useReactTable({
    data: data.rows,
    columns,
    getCoreRowModel: getCoreRowModel(),
    manualSorting: true,
    manualPagination: true,
    manualFiltering: true,
    state: { sorting: [{ id: sort, desc: dir === 'desc' }] },
  });

  function onFilter(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = new FormData(e.currentTarget);
    const set: Record<string, string | null> = { after: null, before: null };
    for (const k of FILTER_KEYS) {
      const v = form.get(k);
      set[k] = typeof v === 'string' && v.trim() !== '' ? v.trim() : null;
    }
    setQuery(withParams(query, set));
  }

  const error = page.error instanceof ApiError ? page.error.message : page.error ? 'The page could not be loaded.' : null;
  const firstHref = withParams(query, { after: null, before: null });
  const nextHref = data.nextCursor ? withParams(query, { after: data.nextCursor, before: null }) : null;
  const prevHref = data.prevCursor ? withParams(query, { before: data.prevCursor, after: null }) : null;
  const atStart = !params.has('after') && !params.has('before');

  return (
    <section className="flex flex-col gap-4" aria-labelledby="catalogue-table-heading">
      <form method="get" onSubmit={onFilter} className="card p-4 grid grid-cols-2 md:grid-cols-4 lg:grid-cols-8 gap-3 items-end text-sm" aria-label="Filter the catalogue">
        <input type="hidden" name="sort" value={sort} />
        <input type="hidden" name="dir" value={dir} />
        <label className="col-span-1">
          <span className="field-label">Review</span>
          <select name="status" defaultValue={params.get('status') ?? 'accepted'} className="field-input">
            <option value="accepted">accepted</option>
            <option value="pending">unreviewed</option>
            <option value="flagged">flagged</option>
            <option value="accepted,flagged">accepted or flagged</option>
            <option value="all">all</option>
          </select>
        </label>
        <label>
          <span className="field-label">Teff from [K]</span>
          <input name="teffMin" inputMode="decimal" defaultValue={params.get('teffMin') ?? ''} className="field-input" />
        </label>
        <label>
          <span className="field-label">Teff to [K]</span>
          <input name="teffMax" inputMode="decimal" defaultValue={params.get('teffMax') ?? ''} className="field-input" />
        </label>
        <label>
          <span className="field-label">Reduced χ² (χ²<sub>ν</sub>) at most</span>
          <input name="chi2Max" inputMode="decimal" defaultValue={params.get('chi2Max') ?? ''} className="field-input" />
        </label>
        <label>
          <span className="field-label">Flag</span>
          <select name="flag" defaultValue={params.get('flag') ?? ''} className="field-input">
            <option value="">any</option>
            {Object.keys(FLAG_EXPLANATIONS).map((f) => (
              <option key={f} value={f}>
                {f}
              </option>
            ))}
          </select>
        </label>
        <label>
          <span className="field-label">Flag is</span>
          <select name="flagAbsent" defaultValue={params.get('flagAbsent') ?? ''} className="field-input">
            <option value="">present</option>
            <option value="1">absent</option>
          </select>
        </label>
        <label>
          <span className="field-label">Star id starts with</span>
          <input name="q" defaultValue={params.get('q') ?? ''} className="field-input font-mono" />
        </label>
        <button type="submit" className="btn btn-primary justify-center">
          Apply
        </button>
      </form>

      <div className="flex flex-wrap items-center gap-3 text-sm">
        <h2 id="catalogue-table-heading" className="text-xl mr-auto">
          Results{' '}
          <span className="num text-base text-ink-500" data-testid="catalogue-count">
            {count.data ? `${count.data.total.toLocaleString('en-US')} of ${count.data.campaignTotal.toLocaleString('en-US')} stars` : ''}
          </span>
        </h2>
        <span className="text-ink-600">Download this view:</span>
        {DOWNLOAD_FORMATS.map((f) => (
          <a key={f.key} href={downloadHref(campaignId, f.key, query)} className="btn btn-quiet py-1 px-3 text-sm no-underline" download data-testid={`download-${f.key}`}>
            {f.label}
          </a>
        ))}
        <p className="basis-full text-xs text-ink-600" data-testid="download-readers">
          Which file for which reader: ECSV for astropy (<code>Table.read(f)</code> as it is, units and provenance included); VOTable or FITS for astronomy table tools and
          other astronomy software; JSON for scripts; CSV for spreadsheets and pandas (<code>comment=&apos;#&apos;</code>) — its <code>#</code> provenance lines are not skipped by astropy&apos;s plain CSV reader.
        </p>
      </div>

      {error && (
        <p className="notice notice-error" role="alert">
          {error}
        </p>
      )}
      <div className="card overflow-x-auto">
        <table className="w-full text-sm" data-testid="catalogue-table" aria-busy={page.isFetching}>
          <thead className="bg-paper-deep text-ink-600 text-left">
            {table.getHeaderGroups().map((g) => (
              <tr key={g.id}>
                {g.headers.map((h) => {
                  const key = h.column.id as CatalogueSort;
                  const sortable = (['star_key', 'teff_k', 'lum_lsun', 'radius_rsun', 'chi2_red', 'review_status'] as string[]).includes(key);
                  const active = sortable && key === sort;
                  return (
                    <th key={h.id} className="px-3 py-2 font-semibold whitespace-nowrap" aria-sort={active ? (dir === 'asc' ? 'ascending' : 'descending') : undefined}>
                      {sortable ? (
                        <a href={`?${sortLink(key)}`} onClick={go(sortLink(key))} className={`no-underline ${active ? 'text-ink-900' : 'text-ink-600'}`}>
                          {flexRender(h.column.columnDef.header, h.getContext())}
                          <span aria-hidden="true" className="ml-1 text-ember-700">
                            {active ? (dir === 'asc' ? '▲' : '▼') : ''}
                          </span>
                        </a>
                      ) : (
                        flexRender(h.column.columnDef.header, h.getContext())
                      )}
                    </th>
                  );
                })}
              </tr>
            ))}
          </thead>
          <tbody>
            {table.getRowModel().rows.map((r) => (
              <tr key={r.id} className="border-t border-rule" data-fit-id={r.original.fitId}>
                {r.getVisibleCells().map((c) => (
                  <td key={c.id} className={`px-3 py-2 ${c.column.id === 'star_key' || c.column.id === 'flags' || c.column.id === 'review_status' ? '' : 'num text-right whitespace-nowrap'}`}>
                    {flexRender(c.column.columnDef.cell, c.getContext())}
                  </td>
                ))}
              </tr>
            ))}
            {data.rows.length === 0 && (
              <tr>
                <td colSpan={columns.length} className="px-3 py-6 text-center text-ink-500">
                  No star matches this filter.
                </td>
              </tr>
            )}
          </tbody>
        </table>
      </div>
      <nav className="flex items-center gap-3 text-sm" aria-label="Pages">
        {!atStart && (
          <a href={`?${firstHref}`} onClick={go(firstHref)}>
            First page
          </a>
        )}
        {prevHref && (
          <a href={`?${prevHref}`} onClick={go(prevHref)} rel="prev">
            ← Previous
          </a>
        )}
        {nextHref && (
          <a href={`?${nextHref}`} onClick={go(nextHref)} rel="next" className="ml-auto">
            Next →
          </a>
        )}
      </nav>
    </section>
  );
}
