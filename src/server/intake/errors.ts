// Intake failures carry statuses the shared HttpError does not have (413 too large, 422 a report
// the analyst must see), and sometimes the validation report itself.
import { errorResponse, json } from '../../lib/http';
import type { ReportEntry } from './report';

export class IntakeError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly extra: { report?: ReportEntry[]; uploadId?: string; summary?: unknown } = {},
  ) {
    super(message);
    this.name = 'IntakeError';
  }

  toJSON() {
    return { error: { code: this.code, message: this.message }, ...this.extra };
  }
}

/** Like lib/http's handle(), plus IntakeError → its own status and body. */
export function handleIntake<C>(fn: (ctx: C) => Promise<Response> | Response): (ctx: C) => Promise<Response> {
  return async (ctx) => {
    try {
      return await fn(ctx);
    } catch (err) {
      if (err instanceof IntakeError) return json(err.toJSON(), err.status);
      return errorResponse(err);
    }
  };
}
