// Queries for the catalogue islands: pages, totals and diagrams of GET /api/campaigns/:id/catalogue*.
// The query string is the state: the same parameters drive the table, the diagrams and the downloads.
import { keepPreviousData, useQuery } from '@tanstack/react-query';
import { apiFetch } from './api';

export type { CatalogueDiagrams, CataloguePage, CatalogueRowView, CatalogueSort, DensityGrid, DiagramPoint } from '../contracts/catalogue';
import { EXPORT_FORMAT_LABELS, type CatalogueDiagrams, type CataloguePage, type ExportFormat } from '../contracts/catalogue';

/** The download links, in the order the contract lists the formats. */
export const DOWNLOAD_FORMATS = (Object.keys(EXPORT_FORMAT_LABELS) as ExportFormat[]).map((key) => ({ key, label: EXPORT_FORMAT_LABELS[key] }));
/** The filter's parameters (everything but sort, direction, page size and position). */
export const FILTER_KEYS = ['status', 'teffMin', 'teffMax', 'chi2Max', 'flag', 'flagAbsent', 'q'] as const;
/** Event the table sends when its filter changes, so the diagrams follow. */
export const FILTER_EVENT = 'starkiln:catalogue-filter';

export function filterQuery(query: string): string {
  const p = new URLSearchParams(query);
  const out = new URLSearchParams();
  for (const k of FILTER_KEYS) {
    const v = p.get(k);
    if (v !== null && v !== '') out.set(k, v);
  }
  if (!out.has('status')) out.set('status', 'accepted');
  return out.toString();
}

const base = (campaignId: string) => `/api/campaigns/${encodeURIComponent(campaignId)}`;

export function downloadHref(campaignId: string, format: string, query: string): string {
  return `${base(campaignId)}/downloads/${format}?${filterQuery(query)}`;
}

export function useCataloguePage(campaignId: string, query: string, initial?: { query: string; page: CataloguePage }) {
  return useQuery({
    queryKey: ['catalogue', campaignId, 'page', query],
    queryFn: () => apiFetch<CataloguePage>(`${base(campaignId)}/catalogue?${query}`),
    initialData: initial && initial.query === query ? initial.page : undefined,
    placeholderData: keepPreviousData,
  });
}

export function useCatalogueCount(campaignId: string, query: string, initial?: { query: string; total: number; campaignTotal: number }) {
  const filter = filterQuery(query);
  return useQuery({
    queryKey: ['catalogue', campaignId, 'count', filter],
    queryFn: () => apiFetch<{ total: number; campaignTotal: number }>(`${base(campaignId)}/catalogue/count?${filter}`),
    initialData: initial && filterQuery(initial.query) === filter ? { total: initial.total, campaignTotal: initial.campaignTotal } : undefined,
    placeholderData: keepPreviousData,
  });
}

export function useCatalogueDiagrams(campaignId: string, query: string) {
  const filter = filterQuery(query);
  return useQuery({
    queryKey: ['catalogue', campaignId, 'diagrams', filter],
    queryFn: () => apiFetch<CatalogueDiagrams>(`${base(campaignId)}/catalogue/diagrams?${filter}`),
    placeholderData: keepPreviousData,
  });
}
