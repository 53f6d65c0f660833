// Accounts and HTTP hardening against the real built server (scripts/server.mjs in front of the
// Node adapter), over real TCP from 127.0.0.1, with the limits on (issue 10, items 5 and 7):
// - a different X-Forwarded-For per request from an untrusted peer does not get round the limits;
//   from a peer named in TRUSTED_PROXIES it names the client;
// - a growing wait per account after failed sign-ins, from any address;
// - at most 3 password-reset e-mails an hour per account (counted in the outbox);
// - sign-up limited per address; weak passwords refused on sign-up, reset and change;
// - an API token cannot make tokens; a reset offers to revoke the account's tokens, saying how many;
// - bearer writes need no Origin; cookie writes with a foreign, null or missing Origin are refused;
// - security headers and a CSP on pages; Secure cookies behind an https public address;
// - a non-member gets the same 404 for an existing campaign as for a missing one.
import { and, count, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { apiTokens, campaigns, outboxMessages } from '../../src/db/schema';
import { createApiToken } from '../../src/server/api-tokens';
import { nameKey } from '../../src/server/campaigns';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { makeUser } from '../../src/seed/factories';
import { insertMockStars } from '../factories-photometry';
import { signInCookie, startApp, type RunningApp } from './harness';

const LIMITS_ON = { AUTH_RATE_LIMIT: 'on' };
let direct: RunningApp; // no trusted proxy: the connection's address (127.0.0.1) is the client
let proxied: RunningApp; // TRUSTED_PROXIES=127.0.0.1: X-Forwarded-For names the client
let addressCounter = 0;
/** A fresh documentation address (RFC 5737) for each simulated client. */
const nextAddress = () => `198.51.100.${(addressCounter++ % 250) + 1}`;
let unique = 0;
const nextEmail = (label: string) => `${label}-${Date.now().toString(36)}-${unique++}@nobody.test`;

beforeAll(async () => {
  direct = await startApp({ env: LIMITS_ON });
  proxied = await startApp({ env: { ...LIMITS_ON, TRUSTED_PROXIES: '127.0.0.1', SIGNUP_OPEN: 'true' } });
});
afterAll(async () => {
  await direct?.stop();
  await proxied?.stop();
});

async function jsonSignIn(run: RunningApp, email: string, password: string, forwardedFor?: string): Promise<Response> {
  const headers: Record<string, string> = { 'content-type': 'application/json', origin: run.baseUrl };
  if (forwardedFor) headers['x-forwarded-for'] = forwardedFor;
  return fetch(`${run.baseUrl}/api/auth/sign-in/email`, { method: 'POST', headers, body: JSON.stringify({ email, password }) });
}

async function formPost(run: RunningApp, pathname: string, fields: Record<string, string>, headers: Record<string, string> = {}): Promise<Response> {
  return fetch(`${run.baseUrl}${pathname}`, {
    method: 'POST',
    headers: { 'content-type': 'application/x-www-form-urlencoded', origin: run.baseUrl, ...headers },
    body: new URLSearchParams(fields).toString(),
    redirect: 'manual',
  });
}

describe('client address: X-Forwarded-For only from a trusted proxy', () => {
  it('a spoofed X-Forwarded-For per request from an untrusted peer still hits better-auth’s sign-in limit', async () => {
    const statuses: number[] = [];
    for (let i = 0; i < 6; i++) statuses.push((await jsonSignIn(direct, nextEmail('spoof'), 'wrong-password-x', nextAddress())).status);
    // better-auth's rule for sign-in: 3 requests per 10 s per address; all six come from 127.0.0.1.
    expect(statuses.slice(0, 3)).toEqual([401, 401, 401]);
    expect(statuses).toContain(429);
  });

  it('a spoofed X-Forwarded-For per request does not get round the sign-in form limit (10 a minute)', async () => {
    const statuses: number[] = [];
    for (let i = 0; i < 12; i++) {
      statuses.push((await formPost(direct, '/sign-in', { email: nextEmail('form'), password: 'wrong-password-x' }, { 'x-forwarded-for': nextAddress() })).status);
    }
    expect(statuses.slice(10)).toEqual([429, 429]);
  });

  it('a trusted proxy’s X-Forwarded-For is honoured: each client has its own bucket', async () => {
    const statuses: number[] = [];
    for (let i = 0; i < 6; i++) statuses.push((await jsonSignIn(proxied, nextEmail('via-proxy'), 'wrong-password-x', nextAddress())).status);
    expect(statuses).toEqual([401, 401, 401, 401, 401, 401]);
    const form: number[] = [];
    for (let i = 0; i < 12; i++) {
      form.push((await formPost(proxied, '/sign-in', { email: nextEmail('form-proxy'), password: 'wrong-password-x' }, { 'x-forwarded-for': nextAddress() })).status);
    }
    expect(form.every((s) => s === 401)).toBe(true);
    // The same client behind the proxy is still limited.
    const same = nextAddress();
    const again: number[] = [];
    for (let i = 0; i < 5; i++) again.push((await jsonSignIn(proxied, nextEmail('same-client'), 'wrong-password-x', same)).status);
    expect(again).toContain(429);
  });
});

describe('per-account wait after failed sign-ins', () => {
  it('after three failures the account waits, even with the right password and from other addresses', async () => {
    const person = await makeUser(proxied.app, { email: nextEmail('locked') });
    for (let i = 0; i < 3; i++) expect((await jsonSignIn(proxied, person.email, 'not-my-password-1', nextAddress())).status).toBe(401);
    const refused = await jsonSignIn(proxied, person.email, person.password, nextAddress());
    expect(refused.status).toBe(429);
    const wait = Number(refused.headers.get('retry-after'));
    expect(wait).toBeGreaterThanOrEqual(1);
    expect(wait).toBeLessThanOrEqual(5);
    expect(((await refused.json()) as { message: string }).message).toMatch(/Too many failed sign-ins\. Wait \d+ seconds/);
    // The sign-in form shares the same counters.
    const page = await formPost(proxied, '/sign-in', { email: person.email, password: person.password }, { 'x-forwarded-for': nextAddress() });
    expect(page.status).toBe(429);
    expect(await page.text()).toMatch(/Too many failed sign-ins/);
    // Another account is not affected.
    const other = await makeUser(proxied.app, { email: nextEmail('free') });
    expect((await jsonSignIn(proxied, other.email, other.password, nextAddress())).status).toBe(200);
  });
});

describe('password reset', () => {
  it('sends at most 3 reset e-mails an hour to one account, however many addresses ask', async () => {
    const person = await makeUser(proxied.app, { email: nextEmail('reset-limit') });
    for (let i = 0; i < 8; i++) {
      const r = await formPost(proxied, '/forgot-password', { email: person.email }, { 'x-forwarded-for': nextAddress() });
      expect(r.status).toBe(200);
    }
    const sent = proxied.app.db
      .select({ n: count() })
      .from(outboxMessages)
      .where(and(eq(outboxMessages.toAddress, person.email), eq(outboxMessages.kind, 'password-reset')))
      .get()!.n;
    expect(sent).toBe(3);
  });

  it('refuses a weak new password, then offers to revoke the account’s tokens and revokes them', async () => {
    const person = await makeUser(proxied.app, { email: nextEmail('reset-tokens') });
    createApiToken(proxied.app.db, person, { name: 'nightly script' });
    createApiToken(proxied.app.db, person, { name: 'plot script' });
    expect((await formPost(proxied, '/forgot-password', { email: person.email }, { 'x-forwarded-for': nextAddress() })).status).toBe(200);
    const mail = proxied.app.db.select().from(outboxMessages).where(eq(outboxMessages.toAddress, person.email)).all().at(-1)!;
    const token = /reset-password\?token=([^\s&"]+)/.exec(mail.textBody)![1];
    const page = await (await fetch(`${proxied.baseUrl}/reset-password?token=${token}`)).text();
    expect(page).toMatch(/Also revoke your 2 API tokens/);

    for (const weak of ['aaaaaaaaaa', '1234567890', person.email]) {
      const r = await formPost(proxied, '/reset-password', { token: decodeURIComponent(token), password: weak, revokeTokens: 'yes' }, { 'x-forwarded-for': nextAddress() });
      expect(r.status, weak).toBe(400);
      expect(await r.text()).toMatch(/too easy to guess/);
    }
    const ok = await formPost(proxied, '/reset-password', { token: decodeURIComponent(token), password: 'ember-lantern-quiet-42', revokeTokens: 'yes' }, { 'x-forwarded-for': nextAddress() });
    expect(ok.status).toBe(303);
    const rows = proxied.app.db.select().from(apiTokens).where(eq(apiTokens.userId, person.id)).all();
    expect(rows).toHaveLength(2);
    expect(rows.every((r) => r.revokedAt !== null)).toBe(true);
  });
});

describe('sign-up and password strength', () => {
  it('refuses weak passwords on sign-up, through our endpoint and better-auth’s', async () => {
    for (const weak of ['aaaaaaaaaa', '1234567890', 'SELF']) {
      const email = nextEmail('weak');
      const password = weak === 'SELF' ? email : weak;
      const r = await fetch(`${proxied.baseUrl}/api/sign-up`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', origin: proxied.baseUrl, 'x-forwarded-for': nextAddress() },
        body: JSON.stringify({ name: 'Weak Password', email, password }),
      });
      expect(r.status, password).toBe(400);
      const body = (await r.json()) as { error: { field: string; message: string } };
      expect(body.error.field).toBe('password');
      expect(body.error.message).toMatch(/too easy to guess/);
      const direct2 = await fetch(`${proxied.baseUrl}/api/auth/sign-up/email`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', origin: proxied.baseUrl, 'x-forwarded-for': nextAddress() },
        body: JSON.stringify({ name: 'Weak Password', email, password }),
      });
      expect(direct2.status).toBe(400);
    }
  });

  it('refuses a weak password on change (better-auth’s change-password)', async () => {
    const person = await makeUser(proxied.app, { email: nextEmail('change') });
    const cookie = await signInCookie(proxied.baseUrl, person.email, person.password);
    const r = await fetch(`${proxied.baseUrl}/api/auth/change-password`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin: proxied.baseUrl, cookie, 'x-forwarded-for': nextAddress() },
      body: JSON.stringify({ currentPassword: person.password, newPassword: '1234567890' }),
    });
    expect(r.status).toBe(400);
    expect(((await r.json()) as { message: string }).message).toMatch(/too easy to guess/);
  });

  it('limits sign-ups per address (10 an hour), whatever X-Forwarded-For says from an untrusted peer', async () => {
    const statuses: number[] = [];
    for (let i = 0; i < 11; i++) {
      const r = await fetch(`${direct.baseUrl}/api/sign-up`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', origin: direct.baseUrl, 'x-forwarded-for': nextAddress() },
        body: JSON.stringify({ name: 'Walk In', email: nextEmail('walk-in'), password: 'ember-lantern-quiet-42' }),
      });
      statuses.push(r.status);
    }
    // Invitation only on this server: 403 until the limit, then 429.
    expect(statuses.slice(0, 10).every((s) => s === 403)).toBe(true);
    expect(statuses[10]).toBe(429);
  });
});

describe('API tokens and Origin', () => {
  let analystCookie: string;
  let analystToken: string;
  let demoCampaignId: string;
  const people = demoUsers();

  beforeAll(async () => {
    demoCampaignId = proxied.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
    analystCookie = await signInCookie(proxied.baseUrl, people.analyst.email, people.analyst.password);
    const analyst = await makeUser(proxied.app, { email: people.analyst.email });
    analystToken = createApiToken(proxied.app.db, analyst, { name: 'security test' }).secret;
    insertMockStars(proxied.app.db, { campaignId: demoCampaignId, count: 3, prefix: 'SEC' });
  });

  const tokenCount = () => proxied.app.db.select({ n: count() }).from(apiTokens).get()!.n;

  it('a token cannot make a token: not through the API, not through the account page form', async () => {
    const before = tokenCount();
    const api = await fetch(`${proxied.baseUrl}/api/tokens`, {
      method: 'POST',
      headers: { authorization: `Bearer ${analystToken}`, 'content-type': 'application/json' },
      body: JSON.stringify({ name: 'minted by a token' }),
    });
    expect(api.status).toBe(403);
    const form = await formPost(proxied, '/account/tokens', { name: 'minted through the form', expiresInDays: '' }, { authorization: `Bearer ${analystToken}` });
    // A page never takes a bearer token: nobody is signed in, so off to sign-in; no secret shown.
    expect(form.status).toBe(302);
    expect(form.headers.get('location')).toMatch(/^\/sign-in/);
    expect(tokenCount()).toBe(before);
  });

  it('bearer writes without a body and without Origin are accepted (refit-stale, token delete)', async () => {
    // The use case answers (200, or 409 when nothing in the demo campaign is stale): past the
    // Origin rule and the role check, which would have said 403 forbidden.
    const refit = await fetch(`${proxied.baseUrl}/api/campaigns/${demoCampaignId}/refit-stale`, { method: 'POST', headers: { authorization: `Bearer ${analystToken}` } });
    const refitBody = (await refit.json()) as { error?: { code: string } };
    expect([200, 201, 202, 409], JSON.stringify(refitBody)).toContain(refit.status);
    if (refit.status === 409) expect(refitBody.error?.code).toBe('conflict');
    // A batch started by the script (no worker runs here, so it stays queued), then cancelled.
    const started = await fetch(`${proxied.baseUrl}/api/campaigns/${demoCampaignId}/batches`, {
      method: 'POST',
      headers: { authorization: `Bearer ${analystToken}`, 'content-type': 'application/json' },
      body: JSON.stringify({ options: { law: 'ccm89', rv: 3.1 } }),
    });
    const startedBody = (await started.json()) as { batch: { id: string } };
    expect(started.status, JSON.stringify(startedBody)).toBe(201);
    const cancel = await fetch(`${proxied.baseUrl}/api/batches/${startedBody.batch.id}/cancel`, { method: 'POST', headers: { authorization: `Bearer ${analystToken}` } });
    expect(cancel.status, await cancel.clone().text()).toBe(200);
    const analyst = await makeUser(proxied.app, { email: people.analyst.email });
    const spare = createApiToken(proxied.app.db, analyst, { name: 'to delete' });
    const del = await fetch(`${proxied.baseUrl}/api/tokens/${spare.token.id}`, { method: 'DELETE', headers: { authorization: `Bearer ${analystToken}` } });
    expect(del.status, await del.clone().text()).toBe(200);
    expect(proxied.app.db.select().from(apiTokens).where(eq(apiTokens.id, spare.token.id)).get()!.revokedAt).not.toBeNull();
  });

  it('cookie writes with a foreign, null or missing Origin are refused, on the JSON API and on forms', async () => {
    const before = proxied.app.db.select({ n: count() }).from(campaigns).get()!.n;
    const post = (origin: string | null, extra: Record<string, string> = {}) => {
      const headers: Record<string, string> = { cookie: analystCookie, 'content-type': 'application/json', ...extra };
      if (origin !== null) headers.origin = origin;
      return fetch(`${proxied.baseUrl}/api/campaigns`, { method: 'POST', headers, body: JSON.stringify({ name: `Origin probe ${unique++}` }) });
    };
    for (const origin of ['https://evil.example', 'null', null]) {
      const r = await post(origin);
      expect(r.status, String(origin)).toBe(403);
      expect(((await r.json()) as { error: { code: string } }).error.code).toBe('forbidden');
    }
    expect((await post(null, { referer: 'https://evil.example/page' })).status).toBe(403);
    expect(proxied.app.db.select({ n: count() }).from(campaigns).get()!.n).toBe(before);
    // From our own page: Origin, or Referer when a browser leaves Origin out.
    expect((await post(proxied.baseUrl)).status).toBe(201);
    expect((await post(null, { referer: `${proxied.baseUrl}/campaigns` })).status).toBe(201);
    // A form: the account page's token form with the session cookie from another site.
    const form = await fetch(`${proxied.baseUrl}/account/tokens`, {
      method: 'POST',
      headers: { cookie: analystCookie, 'content-type': 'application/x-www-form-urlencoded', origin: 'https://evil.example' },
      body: 'name=cross-site',
      redirect: 'manual',
    });
    expect(form.status).toBe(403);
    // Bodiless cookie write without Origin (what a cross-site <img>/fetch could not even send with
    // a cookie under SameSite=Lax, but a script could).
    const cancel = await fetch(`${proxied.baseUrl}/api/campaigns/${demoCampaignId}/refit-stale`, { method: 'POST', headers: { cookie: analystCookie } });
    expect(cancel.status).toBe(403);
  });
});

describe('headers', () => {
  it('pages carry a CSP and the usual security headers; JSON answers too', async () => {
    for (const p of ['/sign-in', '/api/health']) {
      const r = await fetch(`${direct.baseUrl}${p}`);
      const csp = r.headers.get('content-security-policy') ?? '';
      expect(csp, p).toContain("default-src 'self'");
      expect(csp).toContain("frame-ancestors 'none'");
      expect(csp).toContain("object-src 'none'");
      expect(csp).not.toMatch(/script-src[^;]*'unsafe-(inline|eval)'/);
      expect(r.headers.get('x-content-type-options')).toBe('nosniff');
      expect(r.headers.get('referrer-policy')).toBe('same-origin');
      expect(r.headers.get('x-frame-options')).toBe('DENY');
      expect(r.headers.get('permissions-policy')).toContain('camera=()');
      // Plain http here: no HSTS.
      expect(r.headers.get('strict-transport-security')).toBeNull();
    }
  });

  it('session cookies are Secure when the public address is https', async () => {
    const https = await startApp({ env: { BETTER_AUTH_URL: 'https://starkiln.lanternfield.test' } });
    try {
      const people = demoUsers();
      const r = await fetch(`${https.baseUrl}/api/auth/sign-in/email`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', origin: 'https://starkiln.lanternfield.test' },
        body: JSON.stringify({ email: people.analyst.email, password: people.analyst.password }),
      });
      expect(r.status, await r.clone().text()).toBe(200);
      const cookies = r.headers.getSetCookie();
      expect(cookies.length).toBeGreaterThan(0);
      for (const c of cookies) expect(c, c).toMatch(/;\s*Secure/i);
      expect(cookies.some((c) => c.startsWith('__Secure-'))).toBe(true);
      expect((await fetch(`${https.baseUrl}/sign-in`)).headers.get('strict-transport-security')).toMatch(/max-age=\d+/);
      // And over plain http they are not. Through the trusted proxy with an address of its own: the
      // first test filled 127.0.0.1's sign-in bucket on `direct` (3 per 10 s), and on a quick
      // machine this test can run inside that window.
      const plain = await jsonSignIn(proxied, demoUsers().reviewer.email, demoUsers().reviewer.password, nextAddress());
      expect(plain.status).toBe(200);
      for (const c of plain.headers.getSetCookie()) expect(c).not.toMatch(/;\s*Secure/i);
    } finally {
      await https.stop();
    }
  });
});

describe('404 parity for non-members', () => {
  it('an existing campaign and a missing one look the same to a non-member, on pages and the API', async () => {
    const outsider = await makeUser(proxied.app, { email: nextEmail('outsider') });
    const cookie = await signInCookie(proxied.baseUrl, outsider.email, outsider.password);
    const demoCampaignId = proxied.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
    const missing = 'no-such-campaign-id';
    for (const suffix of ['', '/stars', '/catalogue/count', '/review-queue', '/batches']) {
      const a = await fetch(`${proxied.baseUrl}/api/campaigns/${demoCampaignId}${suffix}`, { headers: { cookie } });
      const b = await fetch(`${proxied.baseUrl}/api/campaigns/${missing}${suffix}`, { headers: { cookie } });
      expect([a.status, b.status], suffix).toEqual([404, 404]);
      expect(await a.json()).toEqual(await b.json());
    }
    for (const suffix of ['', '/stars', '/catalogue', '/review', '/intake', '/batches']) {
      const a = await fetch(`${proxied.baseUrl}/campaigns/${demoCampaignId}${suffix}`, { headers: { cookie } });
      const b = await fetch(`${proxied.baseUrl}/campaigns/${missing}${suffix}`, { headers: { cookie } });
      expect([a.status, b.status], suffix).toEqual([404, 404]);
      const strip = (html: string) => html.replaceAll(demoCampaignId, 'ID').replaceAll(missing, 'ID');
      expect(strip(await a.text())).toBe(strip(await b.text()));
    }
  });
});
