// Queries and mutations of the review desk: the server-paged queue, one star's sheet, decisions.
import { useInfiniteQuery, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import type { ReviewFilter, ReviewReason } from '../contracts/review-reasons';
import type { BulkOutcome, DecisionView, QueuePage, ReviewSettings, StarSheet } from '../contracts/review';
import { apiFetch } from './api';

export const reviewKeys = {
  all: ['review'] as const,
  queue: (campaignId: string, filter: ReviewFilter) => [...reviewKeys.all, 'queue', campaignId, filter] as const,
  queues: (campaignId: string) => [...reviewKeys.all, 'queue', campaignId] as const,
  sheet: (campaignId: string, starId: number) => [...reviewKeys.all, 'sheet', campaignId, starId] as const,
};

export function filterSearch(filter: ReviewFilter): URLSearchParams {
  const p = new URLSearchParams();
  if (filter.chi2RedBelow !== undefined) p.set('chi2RedBelow', String(filter.chi2RedBelow));
  if (filter.noFlags) p.set('noFlags', '1');
  if (filter.teffMinK !== undefined) p.set('teffMinK', String(filter.teffMinK));
  if (filter.teffMaxK !== undefined) p.set('teffMaxK', String(filter.teffMaxK));
  if (filter.batchId) p.set('batchId', filter.batchId);
  return p;
}

export type QueueResponse = QueuePage & { settings: ReviewSettings };

export function useReviewQueue(campaignId: string, filter: ReviewFilter, pageSize = 50) {
  return useInfiniteQuery({
    queryKey: reviewKeys.queue(campaignId, filter),
    initialPageParam: null as string | null,
    queryFn: ({ pageParam }) => {
      const p = filterSearch(filter);
      p.set('limit', String(pageSize));
      if (pageParam) p.set('cursor', pageParam);
      return apiFetch<QueueResponse>(`/api/campaigns/${encodeURIComponent(campaignId)}/review-queue?${p}`);
    },
    getNextPageParam: (last) => last.nextCursor,
    staleTime: 5_000,
  });
}

export function useStarSheet(campaignId: string, starId: number | null) {
  return useQuery({
    queryKey: reviewKeys.sheet(campaignId, starId ?? -1),
    queryFn: () => apiFetch<StarSheet>(`/api/campaigns/${encodeURIComponent(campaignId)}/stars/${starId}`),
    enabled: starId !== null,
  });
}

export interface DecisionRequest {
  fitId: number;
  decision: 'accepted' | 'flagged';
  reason?: ReviewReason | null;
  comment?: string;
}

export function useDecide() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: ({ fitId, ...body }: DecisionRequest) => apiFetch<{ decision: DecisionView }>(`/api/fits/${fitId}/decision`, { method: 'POST', body }),
    onSuccess: () => qc.invalidateQueries({ queryKey: reviewKeys.all }),
  });
}

export function useBulkDecide(campaignId: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: { filter: ReviewFilter; decision: 'accepted' | 'flagged'; reason?: ReviewReason | null; comment?: string }) =>
      apiFetch<BulkOutcome>(`/api/campaigns/${encodeURIComponent(campaignId)}/review/bulk`, { method: 'POST', body }),
    onSuccess: () => qc.invalidateQueries({ queryKey: reviewKeys.all }),
  });
}

/** Set values aside (use: false, with a reason) or use them again: POST /api/campaigns/:id/measurements/use (analysts, admins). */
export function useMeasurementUse(campaignId: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: { measurementIds: number[]; use: boolean; reason?: string }) =>
      apiFetch<{ use: boolean; changed: number; unchanged: number; starKeys: string[] }>(`/api/campaigns/${encodeURIComponent(campaignId)}/measurements/use`, { method: 'POST', body }),
    onSuccess: () => qc.invalidateQueries({ queryKey: reviewKeys.all }),
  });
}
