// fetch for islands: JSON in and out, errors as ApiError carrying the server's code and field.
import type { ApiErrorBody } from '../contracts/api';

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly field?: string,
  ) {
    super(message);
    this.name = 'ApiError';
  }
}

export async function apiFetch<T>(path: string, init: { method?: string; body?: unknown } = {}): Promise<T> {
  let res: Response;
  try {
    res = await fetch(path, {
      method: init.method ?? 'GET',
      credentials: 'same-origin',
      headers: init.body === undefined ? { accept: 'application/json' } : { accept: 'application/json', 'content-type': 'application/json' },
      body: init.body === undefined ? undefined : JSON.stringify(init.body),
    });
  } catch {
    throw new ApiError(0, 'network', 'The server could not be reached. Check your connection and try again.');
  }
  const data = (await res.json().catch(() => null)) as (T & Partial<ApiErrorBody>) | null;
  if (!res.ok) {
    const e = data?.error;
    if (res.status === 401) throw new ApiError(401, 'unauthenticated', e?.message ?? 'Your session has ended. Sign in again.');
    throw new ApiError(res.status, e?.code ?? 'http_error', e?.message ?? `The server answered ${res.status}.`, e?.field);
  }
  return data as T;
}
