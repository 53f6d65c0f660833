// better-auth's endpoints (sign-in, sign-out, session, password reset) under /api/auth/*. Its own
// limiter keys on the client address the middleware put in CLIENT_ADDRESS_HEADER; a JSON sign-in
// also goes through the per-account and per-address delay of src/web/sign-in-delay.ts.
import type { APIRoute } from 'astro';
import { signInUnderDelay } from '../../../web/sign-in-delay';
import { json } from '../../../web/http';

export const ALL: APIRoute = async ({ locals, request, url }) => {
  if (request.method === 'POST' && url.pathname.replace(/\/+$/, '') === '/api/auth/sign-in/email') {
    const body = (await request.clone().json().catch(() => null)) as { email?: unknown } | null;
    const email = typeof body?.email === 'string' ? body.email : '';
    const outcome = await signInUnderDelay(locals, email, () => locals.app.auth.handler(request));
    if (outcome.wait) {
      return json({ code: 'TOO_MANY_FAILED_SIGN_INS', message: outcome.wait.message }, 429, { 'retry-after': String(outcome.wait.retryAfterSeconds) });
    }
    return outcome.response;
  }
  return locals.app.auth.handler(request);
};
