// Queries and mutations for batches, used by the batch islands. The JSON shapes are the contract's
// (src/contracts/batches.ts), which the server builds.
import { useMutation, useQuery } from '@tanstack/react-query';
import type { BatchFailuresPage, BatchProgress } from '../contracts/batches';
import { apiFetch } from './api';

export type { BatchFailuresPage, BatchProgress } from '../contracts/batches';

/** What the start form sends (POST /api/campaigns/:id/batches). */
export interface StartBatchBody {
  options: {
    law: string;
    rv: number;
    avMode: 'fixed' | 'fitted';
    avMag: number;
    avMaxMag: number;
    floorFraction: number;
    excludeBands: string[];
    clip: boolean;
    /** Robust rejection of bands inconsistent with the others (default on). */
    reject?: boolean;
    includeLongBands: boolean;
    planckOnly?: boolean;
    lumClass?: 'auto' | 'dwarf' | 'giant';
  };
  /** Only these stars (their ids in the campaign); all stars when absent. */
  starKeys?: string[];
}

/**
 * The start form's "only these stars" box: one star id per line (ids may hold spaces or commas,
 * e.g. "HD 10700", so lines are the only separator); blank lines ignored. Empty box → undefined (all stars).
 */
export function starKeysFromText(text: string): string[] | undefined {
  const keys = text.split(/\r?\n/).map((l) => l.trim()).filter((l) => l !== '');
  return keys.length ? keys : undefined;
}

export const batchKeys = {
  all: ['batches'] as const,
  progress: (id: string) => [...batchKeys.all, 'progress', id] as const,
  failures: (id: string, offset: number) => [...batchKeys.all, 'failures', id, offset] as const,
};

const live = (status: string | undefined) => status !== 'finished' && status !== 'cancelled';

/** Polls the progress every 1.5 s until the batch has finished. */
export function useBatchProgress(batchId: string, initialData?: BatchProgress) {
  return useQuery({
    queryKey: batchKeys.progress(batchId),
    queryFn: async () => (await apiFetch<{ progress: BatchProgress }>(`/api/batches/${encodeURIComponent(batchId)}/progress`)).progress,
    initialData,
    staleTime: 0,
    refetchInterval: (q) => (live(q.state.data?.status) ? 1500 : false),
  });
}

/** The failures list, refreshed every 5 s while the batch runs (failures only ever grow). */
export function useBatchFailures(batchId: string, running: boolean, offset = 0, initialData?: BatchFailuresPage) {
  return useQuery({
    queryKey: batchKeys.failures(batchId, offset),
    queryFn: () => apiFetch<BatchFailuresPage>(`/api/batches/${encodeURIComponent(batchId)}/failures?limit=50&offset=${offset}`),
    initialData: offset === 0 ? initialData : undefined,
    staleTime: 0,
    refetchInterval: running ? 5000 : false,
  });
}

export function useStartBatch(campaignId: string) {
  return useMutation({
    mutationFn: async (body: StartBatchBody) =>
      (await apiFetch<{ batch: { id: string } }>(`/api/campaigns/${encodeURIComponent(campaignId)}/batches`, { method: 'POST', body })).batch,
  });
}
