// Identifies the person behind the request's session cookie and nothing more: every page and API
// route checks authorisation itself with the guards in src/web/guards.ts.
import { defineMiddleware } from 'astro:middleware';
import { getApp, resolveActor } from './app/app';
import { startIntakeThread } from './app/intake-runner';
import { json } from './web/http';
import { actorFromBearer, bearerSecret } from './server/api-tokens';
import { activeActor, DEACTIVATED_MESSAGE } from './server/people';

export const onRequest = defineMiddleware(async (context, next) => {
  const app = getApp();
  // Uploads are read, checked and imported off this event loop, in the intake thread (started once).
  startIntakeThread(app.db, app.env.databasePath);
  context.locals.app = app;
  context.locals.actor = null;
  context.locals.authMethod = null;
  // better-auth's own routes read the session themselves.
  if (!context.url.pathname.startsWith('/api/auth/')) {
    context.locals.actor = await resolveActor(app, context.request.headers);
    if (context.locals.actor) context.locals.authMethod = 'session';
    // Scripts: a personal API token as a bearer token (src/server/api-tokens.ts), no cookie needed.
    const secret = context.locals.actor ? null : bearerSecret(context.request.headers);
    if (secret !== null) {
      const found = actorFromBearer(app.db, secret);
      if (found.ok) {
        context.locals.actor = found.actor;
        context.locals.authMethod = 'token';
      } else if (context.url.pathname.startsWith('/api/')) {
        return json({ error: { code: 'unauthenticated', message: found.message } }, 401, { 'www-authenticate': 'Bearer realm="starkiln"' });
      }
    }
    // Both ways of being identified end here: a deactivated account is nobody (src/server/people.ts).
    if (context.locals.actor && !activeActor(app.db, context.locals.actor)) {
      const byToken = context.locals.authMethod === 'token';
      context.locals.actor = null;
      context.locals.authMethod = null;
      if (byToken && context.url.pathname.startsWith('/api/')) {
        return json({ error: { code: 'unauthenticated', message: DEACTIVATED_MESSAGE } }, 401, { 'www-authenticate': 'Bearer realm="starkiln"' });
      }
    }
  }
  const response = await next();
  response.headers.set('x-content-type-options', 'nosniff');
  response.headers.set('referrer-policy', 'same-origin');
  response.headers.set('x-frame-options', 'DENY');
  return response;
});
