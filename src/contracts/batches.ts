// Shapes of the batch API's JSON (GET /api/campaigns/:id/batches, /api/batches/:id/progress and
// …/failures): built by src/server/batches.ts, drawn by the batch islands and pages.
import type { FitOptions } from '../core/fit';

export const BATCH_STATUSES = ['queued', 'running', 'finished', 'cancelled'] as const;
export type BatchStatus = (typeof BATCH_STATUSES)[number];

export interface BatchSummary {
  id: string;
  campaignId: string;
  status: BatchStatus;
  starCount: number;
  createdAt: string;
  finishedAt: string | null;
  startedBy: { id: string; name: string } | null;
  options: FitOptions;
  bandLibraryVersion: string;
  softwareVersion: string;
  refitOfBatchId: string | null;
}

export interface BatchProgress extends BatchSummary {
  /** Stars with a fit. */
  fitted: number;
  /** Stars whose fit could not be made (data) or whose job gave up (error); each has a reason. */
  failed: number;
  /** Stars waiting for a worker (retrying ones included). */
  waiting: number;
  /** Waiting stars whose chunk failed before and waits for its backoff. */
  retrying: number;
  /** Stars a worker holds right now. */
  running: number;
  /** Results per second over the last minute (or since the start, when shorter). */
  ratePerSecond: number;
  /** Remaining stars / rate; null while nothing has finished yet. */
  secondsLeft: number | null;
}

export interface BatchFailure {
  starId: number;
  starKey: string;
  reason: string;
  /** fit: the data did not allow a fit; job: the job gave up after its attempts. */
  kind: 'fit' | 'job';
}

export interface RetryingJob {
  starKey: string;
  /** Stars of the chunk still without a result. */
  stars: number;
  attempts: number;
  maxAttempts: number;
  lastError: string | null;
  nextTryAt: string;
}

/** GET /api/batches/:id/failures: one page of failures, and the jobs waiting to be tried again. */
export interface BatchFailuresPage {
  total: number;
  failures: BatchFailure[];
  retrying: RetryingJob[];
  limit: number;
  offset: number;
}
