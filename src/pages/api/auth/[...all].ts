// better-auth's endpoints (sign-in, sign-out, session, password reset) under /api/auth/*.
import type { APIRoute } from 'astro';

export const ALL: APIRoute = ({ locals, request }) => locals.app.auth.handler(request);
