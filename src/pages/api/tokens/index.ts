// GET /api/tokens: your personal API tokens (never their secrets).
// POST {name, expiresInDays?}: make one; the answer holds the secret, shown this once. Only from a
// signed-in session: a token cannot make tokens.
import type { APIRoute } from 'astro';
import { requireUser } from '../../../web/guards';
import { handle, json, readJsonBody } from '../../../web/http';
import { createApiToken, listApiTokens } from '../../../server/api-tokens';
import { forbidden } from '../../../server/errors';

export const GET: APIRoute = handle(({ locals }) => {
  const actor = requireUser(locals);
  return json({ tokens: listApiTokens(locals.app.db, actor.id) });
});

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const actor = requireUser(locals);
  if (locals.authMethod === 'token') throw forbidden('Make new tokens on your account page while signed in, not with a token.');
  const body = await readJsonBody(request);
  return json(createApiToken(locals.app.db, actor, body), 201);
});
