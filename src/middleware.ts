// Identifies the person behind the request's session cookie and nothing more: every page and API
// route checks authorisation itself with the guards in src/lib/guards.ts.
import { defineMiddleware } from 'astro:middleware';
import { getApp, resolveActor } from './lib/app';

export const onRequest = defineMiddleware(async (context, next) => {
  const app = getApp();
  context.locals.app = app;
  context.locals.actor = null;
  // better-auth's own routes read the session themselves.
  if (!context.url.pathname.startsWith('/api/auth/')) {
    context.locals.actor = await resolveActor(app, context.request.headers);
  }
  const response = await next();
  response.headers.set('x-content-type-options', 'nosniff');
  response.headers.set('referrer-policy', 'same-origin');
  response.headers.set('x-frame-options', 'DENY');
  return response;
});
