// Identifies the person behind the request's session cookie and nothing more: every page and API
// route checks authorisation itself with the guards in src/web/guards.ts. Also, for every request:
// the client's address (rate limits), the same-origin rule for writes and the security headers
// (docs/decisions/0019-rate-limits-and-client-address.md, 0020-same-origin-writes-and-headers.md).
import { defineMiddleware } from 'astro:middleware';
import { getApp, resolveActor } from './app/app';
import { startIntakeThread } from './app/intake-runner';
import { json } from './web/http';
import { clientAddressOf, refuseCrossOriginWrite, securityHeaders, withScriptHashes } from './web/request-security';
import { actorFromBearer, bearerSecret } from './server/api-tokens';
import { activeActor, DEACTIVATED_MESSAGE } from './server/people';

export const onRequest = defineMiddleware(async (context, next) => {
  const app = getApp();
  // Uploads are read, checked and imported off this event loop, in the intake thread (started once).
  startIntakeThread(app.db, app.env.databasePath, app.env.inputLimits);
  context.locals.app = app;
  context.locals.actor = null;
  context.locals.authMethod = null;
  context.locals.clientAddress = clientAddressOf(context.request, () => context.clientAddress, app.env.trustedProxies);
  const isApi = context.url.pathname.startsWith('/api/');
  // better-auth's routes read the session themselves.
  if (!context.url.pathname.startsWith('/api/auth/')) {
    context.locals.actor = await resolveActor(app, context.request.headers);
    if (context.locals.actor) context.locals.authMethod = 'session';
    // Scripts: a personal API token as a bearer token (src/server/api-tokens.ts), no cookie needed.
    // Only the JSON API takes tokens: a page (and so every form, /account/tokens among them) treats
    // a bearer request as nobody, so a token can never act through a form.
    const secret = context.locals.actor || !isApi ? null : bearerSecret(context.request.headers);
    if (secret !== null) {
      const found = actorFromBearer(app.db, secret);
      if (found.ok) {
        context.locals.actor = found.actor;
        context.locals.authMethod = 'token';
      } else {
        return json({ error: { code: 'unauthenticated', message: found.message } }, 401, { 'www-authenticate': 'Bearer realm="starkiln"' });
      }
    }
    // Both ways of being identified end here: a deactivated account is nobody (src/server/people.ts).
    if (context.locals.actor && !activeActor(app.db, context.locals.actor)) {
      const byToken = context.locals.authMethod === 'token';
      context.locals.actor = null;
      context.locals.authMethod = null;
      if (byToken && isApi) {
        return json({ error: { code: 'unauthenticated', message: DEACTIVATED_MESSAGE } }, 401, { 'www-authenticate': 'Bearer realm="starkiln"' });
      }
    }
  }
  // Writes from a browser (cookie or nobody yet, e.g. sign-in) must come from our own pages;
  // bearer-token requests cannot be forged by another site and need no Origin.
  const refused = context.locals.authMethod === 'token' ? null : refuseCrossOriginWrite(context.request, app.env.trustedOrigins);
  const response = refused ? (isApi ? json({ error: { code: 'forbidden', message: refused } }, 403) : new Response(refused, { status: 403, headers: { 'content-type': 'text/plain; charset=utf-8' } })) : await next();
  for (const [name, value] of Object.entries(securityHeaders({ https: app.env.secureCookies }))) response.headers.set(name, value);
  return withScriptHashes(response);
});
