// Intake failures carry statuses the shared HttpError does not have (413 too large, 422 a report
// the analyst must see), and sometimes the validation report itself. The web glue's errorResponse
// (src/web/http.ts) turns one into its JSON answer.
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
