// Small helpers for .astro pages that post forms and carry sessions.
import { HttpError } from '../server/errors';

/** Only same-site relative paths are followed after sign-in (no open redirects). */
export function safeNext(next: string | null | undefined): string | null {
  if (!next || !next.startsWith('/') || next.startsWith('//') || next.startsWith('/\\')) return null;
  return next;
}

export function signInPath(url: URL): string {
  return `/sign-in?next=${encodeURIComponent(url.pathname + url.search)}`;
}

/** A 303 redirect that carries better-auth's Set-Cookie headers. */
export function redirectWithCookies(location: string, from?: Response): Response {
  const headers = new Headers({ location });
  for (const cookie of from?.headers.getSetCookie() ?? []) headers.append('set-cookie', cookie);
  return new Response(null, { status: 303, headers });
}

export function formString(form: FormData, name: string): string {
  const v = form.get(name);
  return typeof v === 'string' ? v : '';
}

/** Field-keyed messages for re-rendering a form after a failed post. */
export function formErrors(err: unknown): { field?: string; message: string } {
  if (err instanceof HttpError) return { field: err.field, message: err.message };
  console.error(err);
  return { message: 'Something went wrong on the server. Please try again.' };
}

/**
 * A form post that failed: the messages to show in the form (formErrors) and the page's status set
 * to the error's (500 for anything that is not an HttpError, which formErrors logs).
 */
export function formFailure(err: unknown, page: { response: { status?: number } }): { field?: string; message: string } {
  page.response.status = err instanceof HttpError ? err.status : 500;
  return formErrors(err);
}

/** The parts of Astro's page context that refusePage uses. */
export interface PageContext {
  url: URL;
  response: { status?: number };
  redirect(path: string): Response;
}

/**
 * One rule for every page whose guard or loader throws: a visitor who is not signed in goes to
 * sign-in (and back afterwards); any other HttpError sets the page's status and is returned for the
 * page to show with <Denied>; anything else is a bug and propagates.
 */
export function refusePage(error: unknown, page: PageContext): Response | HttpError {
  if (!(error instanceof HttpError)) throw error;
  if (error.status === 401) return page.redirect(signInPath(page.url));
  page.response.status = error.status;
  return error;
}

/** What a guarded page renders: nothing refused, or the refusal to show with <Denied>. */
export interface PageAccess {
  denied: HttpError | null;
}

/**
 * The guard preamble of every guarded page, written once. `load` runs the page's guard and its
 * server-side work; what it throws goes through refusePage's rule. A Response it returns (a redirect
 * after a form post) or the sign-in redirect comes back for the page to return:
 *
 *   const guarded = await guardPage(Astro, () => { requireAdmin(Astro.locals); });
 *   if (guarded instanceof Response) return guarded;
 *   const { denied } = guarded;
 *
 * A page variable that `load` sets is declared `let x = null as T | null`: TypeScript does not follow
 * assignments made inside a callback, and would take `let x: T | null = null` for always null after it.
 */
export async function guardPage(page: PageContext, load: () => unknown): Promise<Response | PageAccess> {
  try {
    const answer = await load();
    return answer instanceof Response ? answer : { denied: null };
  } catch (e) {
    const refused = refusePage(e, page);
    return refused instanceof Response ? refused : { denied: refused };
  }
}
