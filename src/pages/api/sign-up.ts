// POST /api/sign-up {name, email, password, invitation?}: create an account and sign in.
import type { APIRoute } from 'astro';
import { handle, json, readJsonBody } from '../../web/http';
import { registerAccount } from '../../server/accounts';
import { refuseSignUp } from '../../web/rate-limit';

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const tooMany = refuseSignUp(locals);
  if (tooMany) return json({ error: { code: 'too_many_requests', message: tooMany.message } }, 429, { 'retry-after': String(tooMany.retryAfterSeconds) });
  const body = await readJsonBody(request);
  const { userId, response } = await registerAccount(locals.app, body, request.headers);
  const headers = new Headers();
  for (const cookie of response.headers.getSetCookie()) headers.append('set-cookie', cookie);
  return json({ user: { id: userId } }, 201, headers);
});
