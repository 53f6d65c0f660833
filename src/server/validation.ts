import type { z } from 'zod';
import { HttpError } from './errors';

/** Validate input with a zod schema; the first problem becomes a 400 naming the field. */
export function parseInput<S extends z.ZodType>(schema: S, input: unknown): z.output<S> {
  // reportInput keeps the offending value on each issue, so a wrong type is not mistaken for a missing field.
  const result = schema.safeParse(input, { reportInput: true });
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  const field = issue.path.length ? issue.path.join('.') : undefined;
  const message = issue.code === 'invalid_type' && issue.input === undefined && field
    ? `${field} is required.`
    : issue.message;
  throw new HttpError('validation_failed', message, field);
}
