// One TanStack Query client per browser page (shared by every island on it), a fresh one per
// server render so nothing leaks between requests.
import { QueryClient } from '@tanstack/react-query';
import { ApiError } from './api';

let browserClient: QueryClient | undefined;

function makeClient(): QueryClient {
  return new QueryClient({
    defaultOptions: {
      queries: {
        staleTime: 30_000,
        // A 4xx will not get better by asking again.
        retry: (failures, err) => !(err instanceof ApiError && err.status < 500) && failures < 2,
      },
    },
  });
}

export function getQueryClient(): QueryClient {
  if (typeof window === 'undefined') return makeClient();
  return (browserClient ??= makeClient());
}
