// The rule every guarded page shares when its guard or loader throws (src/web/pages.ts refusePage),
// guardPage, the preamble that applies it, and formFailure, what a failed form post shows.
import { describe, expect, it, vi } from 'vitest';
import { formFailure, guardPage, refusePage, type PageContext } from '../src/web/pages';
import { forbidden, HttpError, unauthenticated } from '../src/server/errors';

function page(path: string): PageContext & { redirectedTo: string | null } {
  const ctx = {
    url: new URL(`http://127.0.0.1:4321${path}`),
    response: { status: 200 },
    redirectedTo: null as string | null,
    redirect(to: string) {
      ctx.redirectedTo = to;
      return new Response(null, { status: 302, headers: { location: to } });
    },
  };
  return ctx;
}

describe('refusePage', () => {
  it('sends a visitor who is not signed in to sign-in, coming back to the same page and query', () => {
    const p = page('/campaigns/c1/catalogue?status=flagged');
    const out = refusePage(unauthenticated(), p);
    expect(out).toBeInstanceOf(Response);
    expect(p.redirectedTo).toBe('/sign-in?next=%2Fcampaigns%2Fc1%2Fcatalogue%3Fstatus%3Dflagged');
    expect(p.response.status).toBe(200);
  });

  it('returns any other refusal for the page to show, with its status', () => {
    const p = page('/admin');
    const err = forbidden('Only admins can do that.');
    expect(refusePage(err, p)).toBe(err);
    expect(p.response.status).toBe(403);
    const missing = new HttpError('not_found', 'No campaign with that id.');
    expect(refusePage(missing, p)).toBe(missing);
    expect(p.response.status).toBe(404);
    expect(p.redirectedTo).toBeNull();
  });

  it('lets anything that is not an HttpError propagate (a bug, not a refusal)', () => {
    const bug = new TypeError('x is undefined');
    expect(() => refusePage(bug, page('/admin'))).toThrow(bug);
  });
});

describe('guardPage', () => {
  it('runs the loader once and reports nothing refused when it passes', async () => {
    const p = page('/admin');
    let runs = 0;
    expect(await guardPage(p, async () => void runs++)).toEqual({ denied: null });
    expect(runs).toBe(1);
    expect(p.response.status).toBe(200);
  });

  it('hands back a Response the loader returns (a redirect after a form post)', async () => {
    const redirect = new Response(null, { status: 303, headers: { location: '/campaigns/c1/batches/b1' } });
    expect(await guardPage(page('/campaigns/c1/batches'), () => redirect)).toBe(redirect);
  });

  it('turns a refusal into the page to show, and a visitor not signed in into the sign-in redirect', async () => {
    const p = page('/admin/people');
    const err = forbidden('Only admins can do that.');
    expect(await guardPage(p, () => { throw err; })).toEqual({ denied: err });
    expect(p.response.status).toBe(403);
    const anon = page('/admin/people?q=x');
    const out = await guardPage(anon, async () => { throw unauthenticated(); });
    expect(out).toBeInstanceOf(Response);
    expect(anon.redirectedTo).toBe('/sign-in?next=%2Fadmin%2Fpeople%3Fq%3Dx');
  });

  it('lets a bug propagate', async () => {
    const bug = new TypeError('x is undefined');
    await expect(guardPage(page('/admin'), () => { throw bug; })).rejects.toBe(bug);
  });
});

describe('formFailure', () => {
  it("shows a refusal's message under its field, with its status", () => {
    const p = page('/campaigns');
    expect(formFailure(new HttpError('conflict', 'A campaign with this name exists.', 'name'), p)).toEqual({ field: 'name', message: 'A campaign with this name exists.' });
    expect(p.response.status).toBe(409);
  });

  it('answers 500 with a plain message for a bug, which it logs', () => {
    const p = page('/campaigns');
    const logged = vi.spyOn(console, 'error').mockImplementation(() => {});
    try {
      const bug = new TypeError('x is undefined');
      expect(formFailure(bug, p)).toEqual({ message: 'Something went wrong on the server. Please try again.' });
      expect(p.response.status).toBe(500);
      expect(logged).toHaveBeenCalledWith(bug);
    } finally {
      logged.mockRestore();
    }
  });
});
