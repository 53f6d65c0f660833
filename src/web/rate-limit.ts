// A small in-memory fixed-window limiter for our own form posts. better-auth limits requests to
// its HTTP endpoints, but our pages call auth.api on the server, which bypasses that limiter.
// One web process serves the forms, so process memory is the right place for the counters.
// Every key is the client's address as the middleware resolved it (locals.clientAddress: the
// connection's peer, or X-Forwarded-For only from a trusted proxy), never the raw header.

export interface RateLimiter {
  /** Count one attempt for `key`; ok=false once more than `max` fall inside the window. */
  hit(key: string, nowMs?: number): { ok: boolean; retryAfterSeconds: number };
}

export function createRateLimiter(options: { windowMs: number; max: number }): RateLimiter {
  const windows = new Map<string, { startMs: number; count: number }>();
  return {
    hit(key, nowMs = Date.now()) {
      if (windows.size > 10_000) {
        for (const [k, w] of windows) if (nowMs - w.startMs >= options.windowMs) windows.delete(k);
      }
      let w = windows.get(key);
      if (!w || nowMs - w.startMs >= options.windowMs) {
        w = { startMs: nowMs, count: 0 };
        windows.set(key, w);
      }
      w.count += 1;
      const retryAfterSeconds = Math.ceil((w.startMs + options.windowMs - nowMs) / 1000);
      return { ok: w.count <= options.max, retryAfterSeconds };
    },
  };
}

/** Sign-in, sign-up and reset forms: 10 posts a minute per address and form. */
export const formLimiter = createRateLimiter({ windowMs: 60_000, max: 10 });
/** New accounts (sign-up page and POST /api/sign-up together): 10 an hour per address. */
export const signUpLimiter = createRateLimiter({ windowMs: 60 * 60_000, max: 10 });

export function tooManyMessage(retryAfterSeconds: number): string {
  return `Too many attempts. Wait ${retryAfterSeconds} seconds and try again.`;
}

/** The parts of Astro's page context that refuseTooManyPosts reads and sets. */
export interface FormPage {
  request: Request;
  response: { status?: number };
  locals: { clientAddress: string; app: { env: { authRateLimit: boolean } } };
}

/**
 * Counts a POST of `form` from this address. Over the limit: sets 429 and returns the message to
 * show instead of handling the post; otherwise (or for a GET, or with the limit off) null.
 */
export function refuseTooManyPosts(page: FormPage, form: string): { message: string } | null {
  if (page.request.method !== 'POST' || !page.locals.app.env.authRateLimit) return null;
  const hit = formLimiter.hit(`${form}:${page.locals.clientAddress}`);
  if (hit.ok) return null;
  page.response.status = 429;
  return { message: tooManyMessage(hit.retryAfterSeconds) };
}

/** Counts one account creation from this address; the refusal's wait, or null when allowed. */
export function refuseSignUp(locals: FormPage['locals']): { retryAfterSeconds: number; message: string } | null {
  if (!locals.app.env.authRateLimit) return null;
  const hit = signUpLimiter.hit(locals.clientAddress);
  if (hit.ok) return null;
  return { retryAfterSeconds: hit.retryAfterSeconds, message: `Too many new accounts from your address. Wait ${Math.ceil(hit.retryAfterSeconds / 60)} minutes and try again.` };
}
