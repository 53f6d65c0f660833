// JSON in and out for API routes: one error shape {error: {code, message, field?}}.
import { z } from 'zod';
import { HttpError } from '../server/errors';
import { IntakeError } from '../server/intake/errors';
import { parseInput } from '../server/validation';

export function json(data: unknown, status = 200, headers?: HeadersInit): Response {
  const h = new Headers(headers);
  h.set('content-type', 'application/json; charset=utf-8');
  h.set('cache-control', 'no-store');
  return new Response(JSON.stringify(data), { status, headers: h });
}

export function errorResponse(err: unknown): Response {
  if (err instanceof HttpError) return json(err.toJSON(), err.status);
  // Intake failures have statuses of their own (413, 422) and may carry the validation report.
  if (err instanceof IntakeError) return json(err.toJSON(), err.status);
  console.error(err);
  return json({ error: { code: 'internal', message: 'Something went wrong on the server. The problem has been logged.' } }, 500);
}

/** Wrap a handler so thrown HttpErrors and IntakeErrors (from guards, validation, use cases) become JSON responses. */
export function handle<C>(fn: (ctx: C) => Promise<Response> | Response): (ctx: C) => Promise<Response> {
  return async (ctx) => {
    try {
      return await fn(ctx);
    } catch (err) {
      return errorResponse(err);
    }
  };
}

/** Read and validate a JSON body. Malformed JSON, a wrong content type or bad fields are 400s. */
export async function readJson<S extends z.ZodType>(request: Request, schema: S): Promise<z.output<S>> {
  const type = request.headers.get('content-type') ?? '';
  if (!type.toLowerCase().includes('application/json')) {
    throw new HttpError('bad_request', 'Send the request body as JSON with Content-Type: application/json.');
  }
  const text = await request.text();
  let body: unknown;
  try {
    body = JSON.parse(text);
  } catch (err) {
    const detail = err instanceof Error ? err.message : 'parse error';
    throw new HttpError('invalid_json', `The request body is not valid JSON (${detail}).`);
  }
  return parseInput(schema, body);
}

/** Read a JSON body without a schema (the use case validates it). Still rejects malformed JSON. */
export async function readJsonBody(request: Request): Promise<unknown> {
  return readJson(request, z.unknown());
}
