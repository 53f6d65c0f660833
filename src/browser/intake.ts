// Intake calls for the islands. Unlike apiFetch, a refused import keeps the server's validation
// report (422 {error, report}) so the page can show every problem. Reading, checks and imports are
// jobs on the server: these calls wait for the job (asking every half second) and report its
// progress on the way.
import type { Mapping, MappingRules } from '../core/input/mapping';
import type { CheckSummary, ImportSummary, IntakeJobView, MappingPresetView, ReportEntry, UploadDetail, UploadSummary } from '../contracts/intake';

export type { CheckSummary, ImportSummary, IntakeJobView, MappingPresetView, ReportEntry, UploadDetail, UploadSummary };

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

export type OnProgress = (job: IntakeJobView) => void;

const finished = (j: IntakeJobView) => j.status === 'done' || j.status === 'failed';
const pause = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Waits for a job to finish; a refused job becomes the IntakeApiError its request would have been. */
async function settle(campaignId: string, job: IntakeJobView, onProgress?: OnProgress): Promise<IntakeJobView> {
  let j = job;
  while (!finished(j)) {
    onProgress?.(j);
    await pause(500);
    j = (await call<{ job: IntakeJobView }>(`${base(campaignId)}/uploads/${j.uploadId}/jobs/${j.id}`)).job;
  }
  onProgress?.(j);
  if (j.status === 'failed') {
    const r = j.refusal ?? { status: 500, error: { code: 'internal', message: 'The job failed on the server.' } };
    throw new IntakeApiError(r.status, r.error.code, r.error.message, r.report ?? []);
  }
  return j;
}

/** The upload once its reading job has finished (columns, preview and detected mapping are there). */
async function whenRead(campaignId: string, uploadId: string, onProgress?: OnProgress): Promise<UploadDetail> {
  let u = (await call<{ upload: UploadDetail }>(`${base(campaignId)}/uploads/${uploadId}`)).upload;
  if (u.job && u.job.kind === 'read' && !finished(u.job)) {
    await settle(campaignId, u.job, onProgress);
    u = (await call<{ upload: UploadDetail }>(`${base(campaignId)}/uploads/${uploadId}`)).upload;
  } else if (u.status === 'rejected') {
    const why = u.report[0]?.message ?? 'The file could not be read.';
    throw new IntakeApiError(422, 'unreadable_file', why, u.report);
  }
  return u;
}

export const intakeApi = {
  uploadUrl: (campaignId: string) => `${base(campaignId)}/uploads`,
  list: async (campaignId: string) => (await call<{ uploads: UploadSummary[] }>(`${base(campaignId)}/uploads`)).uploads,
  get: whenRead,
  check: async (campaignId: string, uploadId: string, mapping: Mapping, rules: MappingRules, onProgress?: OnProgress): Promise<CheckSummary> => {
    const { job } = await call<{ job: IntakeJobView }>(`${base(campaignId)}/uploads/${uploadId}/check`, 'POST', { mapping, rules });
    return (await settle(campaignId, job, onProgress)).check!;
  },
  import: async (
    campaignId: string,
    uploadId: string,
    body: { mapping?: Mapping; rules: MappingRules; source?: string; importValidRows: boolean; image?: { starId: string; band: string; mag: number; magErr: number } },
    onProgress?: OnProgress,
  ): Promise<ImportSummary> => {
    const { job } = await call<{ job: IntakeJobView }>(`${base(campaignId)}/uploads/${uploadId}/import`, 'POST', body);
    return (await settle(campaignId, job, onProgress)).import!;
  },
  presets: async (campaignId: string) => (await call<{ presets: MappingPresetView[] }>(`${base(campaignId)}/mapping-presets`)).presets,
  savePreset: async (campaignId: string, name: string, mapping: Mapping, rules: MappingRules) =>
    (await call<{ preset: MappingPresetView }>(`${base(campaignId)}/mapping-presets`, 'POST', { name, mapping, rules })).preset,
  deletePreset: async (campaignId: string, presetId: string) => call<{ deleted: boolean }>(`${base(campaignId)}/mapping-presets/${presetId}`, 'DELETE'),
};
