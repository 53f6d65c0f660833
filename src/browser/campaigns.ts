// Queries and mutations for campaigns, used by the islands.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import type { AddMemberResult, CampaignOverview, CampaignSummary } from '../contracts/api';
import type { CampaignRole } from '../contracts/vocabulary';
import { apiFetch } from './api';

export const campaignKeys = {
  all: ['campaigns'] as const,
  list: () => [...campaignKeys.all, 'list'] as const,
  detail: (id: string) => [...campaignKeys.all, 'detail', id] as const,
};

export function useCampaigns(initialData?: CampaignSummary[]) {
  return useQuery({
    queryKey: campaignKeys.list(),
    queryFn: async () => (await apiFetch<{ campaigns: CampaignSummary[] }>('/api/campaigns')).campaigns,
    initialData,
  });
}

export function useCreateCampaign() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: async (input: { name: string; description: string }) =>
      (await apiFetch<{ campaign: CampaignSummary }>('/api/campaigns', { method: 'POST', body: input })).campaign,
    onSuccess: (created) => {
      qc.setQueryData<CampaignSummary[]>(campaignKeys.list(), (old) => [created, ...(old ?? []).filter((c) => c.id !== created.id)]);
      void qc.invalidateQueries({ queryKey: campaignKeys.list() });
    },
  });
}

export function useCampaignOverview(id: string, initialData?: CampaignOverview) {
  return useQuery({
    queryKey: campaignKeys.detail(id),
    queryFn: () => apiFetch<CampaignOverview>(`/api/campaigns/${encodeURIComponent(id)}`),
    initialData,
  });
}

export function useAddMember(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (input: { email: string; roles: CampaignRole[] }) =>
      apiFetch<AddMemberResult>(`/api/campaigns/${encodeURIComponent(id)}/members`, { method: 'POST', body: input }),
    onSuccess: () => qc.invalidateQueries({ queryKey: campaignKeys.detail(id) }),
  });
}
