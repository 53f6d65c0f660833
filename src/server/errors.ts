// One error type for everything a user can cause. API routes turn it into JSON
// {error: {code, message, field?}}; pages turn 401 into a redirect to sign-in.
export type ErrorCode =
  | 'bad_request'
  | 'invalid_json'
  | 'validation_failed'
  | 'unauthenticated'
  | 'forbidden'
  | 'not_found'
  | 'conflict';

const STATUS: Record<ErrorCode, number> = {
  bad_request: 400,
  invalid_json: 400,
  validation_failed: 400,
  unauthenticated: 401,
  forbidden: 403,
  not_found: 404,
  conflict: 409,
};

export class HttpError extends Error {
  readonly status: number;
  constructor(
    readonly code: ErrorCode,
    message: string,
    readonly field?: string,
  ) {
    super(message);
    this.name = 'HttpError';
    this.status = STATUS[code];
  }

  toJSON(): { error: { code: ErrorCode; message: string; field?: string } } {
    return { error: { code: this.code, message: this.message, ...(this.field ? { field: this.field } : {}) } };
  }
}

export const unauthenticated = () => new HttpError('unauthenticated', 'Sign in to continue.');
export const forbidden = (message = 'You do not have permission to do that.') => new HttpError('forbidden', message);
