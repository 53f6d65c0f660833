// Intake calls for the islands. Unlike apiFetch, a refused import keeps the server's validation
// report (422 {error, report}) so the page can show every problem.
import type { Mapping, MappingRules } from '../core/input/mapping';
import type { CheckSummary, ImportSummary, MappingPresetView, ReportEntry, UploadDetail, UploadSummary } from '../contracts/intake';

export type { CheckSummary, ImportSummary, MappingPresetView, ReportEntry, UploadDetail, UploadSummary };

export class IntakeApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly report: ReportEntry[] = [],
  ) {
    super(message);
    this.name = 'IntakeApiError';
  }
}

async function call<T>(path: string, method = 'GET', body?: unknown): Promise<T> {
  let res: Response;
  try {
    res = await fetch(path, {
      method,
      credentials: 'same-origin',
      headers: body === undefined ? { accept: 'application/json' } : { accept: 'application/json', 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
  } catch {
    throw new IntakeApiError(0, 'network', 'The server could not be reached. Check your connection and try again.');
  }
  const data = (await res.json().catch(() => null)) as (T & { error?: { code: string; message: string }; report?: ReportEntry[] }) | null;
  if (!res.ok) {
    throw new IntakeApiError(res.status, data?.error?.code ?? 'http_error', data?.error?.message ?? `The server answered ${res.status}.`, data?.report ?? []);
  }
  return data as T;
}

const base = (campaignId: string) => `/api/campaigns/${encodeURIComponent(campaignId)}`;

export const intakeApi = {
  uploadUrl: (campaignId: string) => `${base(campaignId)}/uploads`,
  list: async (campaignId: string) => (await call<{ uploads: UploadSummary[] }>(`${base(campaignId)}/uploads`)).uploads,
  get: async (campaignId: string, uploadId: string) => (await call<{ upload: UploadDetail }>(`${base(campaignId)}/uploads/${uploadId}`)).upload,
  check: async (campaignId: string, uploadId: string, mapping: Mapping, rules: MappingRules) =>
    (await call<{ check: CheckSummary }>(`${base(campaignId)}/uploads/${uploadId}/check`, 'POST', { mapping, rules })).check,
  import: async (campaignId: string, uploadId: string, body: { mapping?: Mapping; rules: MappingRules; source?: string; importValidRows: boolean; image?: { starId: string; band: string; mag: number; magErr: number } }) =>
    (await call<{ import: ImportSummary }>(`${base(campaignId)}/uploads/${uploadId}/import`, 'POST', body)).import,
  presets: async (campaignId: string) => (await call<{ presets: MappingPresetView[] }>(`${base(campaignId)}/mapping-presets`)).presets,
  savePreset: async (campaignId: string, name: string, mapping: Mapping, rules: MappingRules) =>
    (await call<{ preset: MappingPresetView }>(`${base(campaignId)}/mapping-presets`, 'POST', { name, mapping, rules })).preset,
  deletePreset: async (campaignId: string, presetId: string) => call<{ deleted: boolean }>(`${base(campaignId)}/mapping-presets/${presetId}`, 'DELETE'),
};
