// POST /api/sign-up {name, email, password, invitation?}: create an account and sign in.
import type { APIRoute } from 'astro';
import { handle, json, readJsonBody } from '../../web/http';
import { registerAccount } from '../../server/accounts';

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const body = await readJsonBody(request);
  const { userId, response } = await registerAccount(locals.app, body, request.headers);
  const headers = new Headers();
  for (const cookie of response.headers.getSetCookie()) headers.append('set-cookie', cookie);
  return json({ user: { id: userId } }, 201, headers);
});
