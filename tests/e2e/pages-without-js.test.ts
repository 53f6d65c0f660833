// Pages as a browser without JavaScript sees them: plain GETs and form posts against the built
// server. Data pages render on the server; every form works as a full-page post.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { campaigns, outboxMessages, user } from '../../src/db/schema';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { startBatch } from '../../src/server/batches';
import { nameKey } from '../../src/server/campaigns';
import { makeUser } from '../../src/seed/factories';
import { createWorker } from '../../workers/runner';
import { insertMockStars } from '../factories-photometry';
import { callApi, signInCookie, startApp, type RunningApp } from './harness';

let run: RunningApp;
let demoId: string;
const people = demoUsers();

beforeAll(async () => {
  run = await startApp();
  demoId = run.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
});
afterAll(async () => {
  await run?.stop();
});

async function get(pathname: string, cookie?: string) {
  const res = await fetch(`${run.baseUrl}${pathname}`, { headers: cookie ? { cookie } : {}, redirect: 'manual' });
  return { status: res.status, location: res.headers.get('location'), html: await res.text() };
}

async function postForm(pathname: string, fields: Record<string, string | string[]>, cookie?: string) {
  const body = new URLSearchParams();
  for (const [k, v] of Object.entries(fields)) for (const x of Array.isArray(v) ? v : [v]) body.append(k, x);
  const res = await fetch(`${run.baseUrl}${pathname}`, {
    method: 'POST',
    headers: { 'content-type': 'application/x-www-form-urlencoded', origin: run.baseUrl, ...(cookie ? { cookie } : {}) },
    body,
    redirect: 'manual',
  });
  const cookies = res.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
  return { status: res.status, location: res.headers.get('location'), html: await res.text(), cookies };
}

describe('pages without JavaScript', () => {
  it('send anonymous visitors to sign-in, keeping where they wanted to go', async () => {
    const r = await get(`/campaigns/${demoId}`);
    expect(r.status).toBe(302);
    expect(r.location).toBe(`/sign-in?next=${encodeURIComponent(`/campaigns/${demoId}`)}`);
  });

  it('sign in through the form and render campaign data on the server', async () => {
    const signIn = await postForm('/sign-in', { email: people.analyst.email, password: people.analyst.password, next: `/campaigns/${demoId}` });
    expect(signIn.status).toBe(303);
    expect(signIn.location).toBe(`/campaigns/${demoId}`);
    const list = await get('/campaigns', signIn.cookies);
    expect(list.status).toBe(200);
    expect(list.html).toContain('Lanternfield Survey');
    const overview = await get(`/campaigns/${demoId}`, signIn.cookies);
    expect(overview.html).toContain(people.reviewer.email);
    expect(overview.html).toContain(people.collaborator.email);
    // The blackbody caveat is on every page.
    expect(overview.html).toMatch(/colour temperature/);
  });

  it('refuse a wrong password, and an open redirect, on the sign-in form', async () => {
    const wrong = await postForm('/sign-in', { email: people.analyst.email, password: 'not-the-password' });
    expect(wrong.status).toBe(401);
    expect(wrong.html).toContain('do not match an account');
    const offsite = await postForm('/sign-in', { email: people.analyst.email, password: people.analyst.password, next: '//elsewhere.test/x' });
    expect(offsite.location).toBe('/campaigns');
  });

  it('create a campaign by form post, and refuse a duplicate name with a message', async () => {
    const cookie = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    const created = await postForm('/campaigns', { name: 'Form-made campaign', description: '' }, cookie);
    expect(created.status).toBe(303);
    const row = run.app.db.select().from(campaigns).where(eq(campaigns.name, 'Form-made campaign')).get()!;
    expect(created.location).toBe(`/campaigns/${row.id}`);
    const dup = await postForm('/campaigns', { name: 'form-made CAMPAIGN', description: '' }, cookie);
    expect(dup.status).toBe(409);
    expect(dup.html).toContain('already exists');
  });

  it('add a member by form post; a guest may not', async () => {
    const analyst = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    const added = await postForm(`/campaigns/${demoId}`, { email: 'form.invitee@example.test', roles: ['collaborator'] }, analyst);
    expect(added.status).toBe(200);
    expect(added.html).toContain('Invitation sent to form.invitee@example.test');
    const twice = await postForm(`/campaigns/${demoId}`, { email: 'form.invitee@example.test', roles: ['collaborator'] }, analyst);
    expect(twice.status).toBe(409);
    const guest = await signInCookie(run.baseUrl, people.collaborator.email, people.collaborator.password);
    const refused = await postForm(`/campaigns/${demoId}`, { email: 'friend@example.test', roles: ['collaborator'] }, guest);
    expect(refused.status).toBe(403);
  });

  it('sign up from an invitation e-mail, with clear messages for bad input', async () => {
    const analyst = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    await callApi(run.baseUrl, `/api/campaigns/${demoId}/members`, { cookie: analyst, json: { email: 'invitee@example.test', roles: ['collaborator'] } });
    const mail = run.app.db.select().from(outboxMessages).where(eq(outboxMessages.toAddress, 'invitee@example.test')).get()!;
    const link = new URL(/https?:\/\/\S+/.exec(mail.textBody)![0]);
    const token = link.searchParams.get('invite')!;

    const page = await get(`${link.pathname}${link.search}`);
    expect(page.html).toContain(DEMO_CAMPAIGN.name);
    const badEmail = await postForm('/sign-up', { invitation: token, name: 'In Vitee', email: 'invitee-at-example', password: 'a-long-password' });
    expect(badEmail.status).toBe(400);
    expect(badEmail.html).toContain('Enter a valid e-mail address');
    const short = await postForm('/sign-up', { invitation: token, name: 'In Vitee', email: 'invitee@example.test', password: 'short' });
    expect(short.html).toContain('at least 10 characters');
    expect(run.app.db.select().from(user).where(eq(user.email, 'invitee@example.test')).all()).toHaveLength(0);

    const ok = await postForm('/sign-up', { invitation: token, name: 'In Vitee', email: 'invitee@example.test', password: 'a-long-password' });
    expect(ok.status).toBe(303);
    const me = await callApi(run.baseUrl, '/api/me', { cookie: ok.cookies });
    expect(me.body).toMatchObject({ user: { email: 'invitee@example.test', kind: 'guest' } });
    const mine = await callApi(run.baseUrl, '/api/campaigns', { cookie: ok.cookies });
    expect((mine.body as { campaigns: { id: string }[] }).campaigns.map((c) => c.id)).toEqual([demoId]);
  });

  it('reset a forgotten password through the outbox', async () => {
    const asked = await postForm('/forgot-password', { email: people.reviewer.email });
    expect(asked.status).toBe(200);
    expect(asked.html).toContain('a reset link is on its way');
    const mail = run.app.db
      .select()
      .from(outboxMessages)
      .where(and(eq(outboxMessages.toAddress, people.reviewer.email), eq(outboxMessages.kind, 'password-reset')))
      .get()!;
    const link = new URL(/https?:\/\/\S+/.exec(mail.textBody)![0]);
    const done = await postForm('/reset-password', { token: link.searchParams.get('token')!, password: 'a-brand-new-password' });
    expect(done.status).toBe(303);
    expect(done.location).toBe('/sign-in?reset=done');
    await expect(signInCookie(run.baseUrl, people.reviewer.email, 'a-brand-new-password')).resolves.toMatch(/session_token/);
    await expect(signInCookie(run.baseUrl, people.reviewer.email, people.reviewer.password)).rejects.toThrow(/401/);
  });

  it('change the password while signed in, by form post; other browsers are signed out when asked', async () => {
    const person = await makeUser(run.app, { email: 'changing@lanternfield.test', name: 'Wren Holloway', password: 'the-first-password' });
    const here = await signInCookie(run.baseUrl, person.email, 'the-first-password');
    const elsewhere = await signInCookie(run.baseUrl, person.email, 'the-first-password');
    expect((await get('/account/password')).location).toBe('/sign-in?next=%2Faccount%2Fpassword');
    const page = await get('/account/password', here);
    expect(page.status).toBe(200);
    expect(page.html).toContain('Current password');

    const wrong = await postForm('/account/password', { currentPassword: 'not-my-password', password: 'a-second-long-password', signOutOthers: 'yes' }, here);
    expect(wrong.status).toBe(400);
    expect(wrong.html).toContain('That is not your current password.');
    const weak = await postForm('/account/password', { currentPassword: 'the-first-password', password: 'short' }, here);
    expect(weak.html).toContain('at least 10 characters');

    const done = await postForm('/account/password', { currentPassword: 'the-first-password', password: 'a-second-long-password', signOutOthers: 'yes' }, here);
    expect(done.status).toBe(303);
    expect(done.location).toBe('/account/password?changed=others-signed-out');
    expect(done.cookies).toMatch(/session_token=/);
    const after = await get(done.location!, done.cookies);
    expect(after.html).toContain('Your password is changed.');
    expect((await callApi(run.baseUrl, '/api/me', { cookie: elsewhere })).status).toBe(401);
    await expect(signInCookie(run.baseUrl, person.email, 'a-second-long-password')).resolves.toMatch(/session_token/);
    await expect(signInCookie(run.baseUrl, person.email, 'the-first-password')).rejects.toThrow(/401/);
  });

  it('list a campaign’s stars a page at a time, each linking to its star sheet', async () => {
    const made = insertMockStars(run.app.db, { campaignId: demoId, count: 5, prefix: 'PGS' });
    const guest = await signInCookie(run.baseUrl, people.collaborator.email, people.collaborator.password);
    const overview = await get(`/campaigns/${demoId}`, guest);
    expect(overview.html).toContain(`href="/campaigns/${demoId}/stars"`);
    const first = await get(`/campaigns/${demoId}/stars?q=PGS&limit=2`, guest);
    expect(first.status).toBe(200);
    expect(first.html).toContain('data-testid="star-table"');
    expect(first.html).toContain(`href="/campaigns/${demoId}/stars/${made[0].id}"`);
    expect(first.html).toContain('PGS-000002');
    expect(first.html).not.toContain('PGS-000003');
    expect(first.html).toMatch(/<span class="num">5<\/span> stars/);
    const next = first.html.match(/href="([^"]+)" rel="next"/)![1].replace(/&(amp|#38);/g, '&');
    const second = await get(next, guest);
    expect(second.html).toContain('PGS-000003');
    expect(second.html).toContain('PGS-000004');
    expect(second.html).not.toContain('PGS-000002');
    expect(second.html).toContain('rel="prev"');
    const star = await get(`/campaigns/${demoId}/stars/${made[0].id}`, guest);
    expect(star.status).toBe(200);
    expect(star.html).toContain('PGS-000001');
    expect((await get(`/campaigns/${demoId}/stars?limit=9999`, guest)).status).toBe(400);
    const admin = await signInCookie(run.baseUrl, people.admin.email, people.admin.password);
    expect((await get(`/campaigns/${demoId}/stars`, admin)).status).toBe(200); // admins oversee every campaign
    expect((await get(`/campaigns/${demoId}/stars`)).status).toBe(302);
    const analyst = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    expect((await get(`/campaigns/${demoId}/intake`, analyst)).html).toContain(`href="/campaigns/${demoId}/stars" data-testid="campaign-stars-link"`);
  });

  it('link each star that could not be fitted to its star sheet, let an analyst cancel a batch, and start one over chosen stars, by form post', async () => {
    const made = insertMockStars(run.app.db, { campaignId: demoId, count: 4, prefix: 'BFL', fewBandsEvery: 2 });
    const analystRow = run.app.db.select().from(user).where(eq(user.email, people.analyst.email)).get()!;
    const actor = { id: analystRow.id, name: analystRow.name, email: analystRow.email, kind: analystRow.kind as 'member' };
    const fitted = startBatch(run.app, actor, demoId, { starKeys: made.map((m) => m.starKey) });
    await createWorker(run.app, { owner: 'pages-test', drain: true, idleMs: 5 }).run();
    const analyst = await signInCookie(run.baseUrl, people.analyst.email, people.analyst.password);
    const page = await get(`/campaigns/${demoId}/batches/${fitted.id}`, analyst);
    expect(page.status).toBe(200);
    // BFL-000002 and BFL-000004 have one band only: they could not be fitted, and link to their sheets.
    expect(page.html).toContain(`href="/campaigns/${demoId}/stars/${made[1].id}">BFL-000002</a>`);
    expect(page.html).toContain(`href="/campaigns/${demoId}/stars/${made[3].id}">BFL-000004</a>`);
    expect(page.html).not.toContain('data-testid="cancel-form"'); // finished: nothing to cancel

    const waiting = startBatch(run.app, actor, demoId, { starKeys: made.map((m) => m.starKey) });
    // (The reviewer's password changed in an earlier test; the collaborator reads but may not cancel either.)
    const guest = await signInCookie(run.baseUrl, people.collaborator.email, people.collaborator.password);
    expect((await get(`/campaigns/${demoId}/batches/${waiting.id}`, guest)).html).not.toContain('data-testid="cancel-form"');
    expect((await postForm(`/campaigns/${demoId}/batches/${waiting.id}`, {}, guest)).status).toBe(403);
    const open = await get(`/campaigns/${demoId}/batches/${waiting.id}`, analyst);
    expect(open.html).toContain('data-testid="cancel-form"');
    const cancelled = await postForm(`/campaigns/${demoId}/batches/${waiting.id}`, {}, analyst);
    expect(cancelled.status).toBe(303);
    expect(cancelled.location).toBe(`/campaigns/${demoId}/batches/${waiting.id}?cancelled=1`);
    const after = await get(cancelled.location!, analyst);
    expect(after.html).toContain('data-testid="cancel-notice"');
    expect(after.html).toContain('— <!-- -->cancelled');
    expect(after.html).not.toContain('data-testid="cancel-form"');
    expect(run.app.db.$client.prepare('SELECT count(*) FROM jobs WHERE batch_id = ?').pluck().get(waiting.id)).toBe(0);
    const twice = await postForm(`/campaigns/${demoId}/batches/${waiting.id}`, {}, analyst);
    expect(twice.status).toBe(409);
    expect(twice.html).toContain('cancelled already');

    // The start form fits only the stars listed one per line, when any are listed.
    const form = { law: 'f99', rv: '3.1', avMode: 'fixed', avMag: '0', floorPercent: '2' };
    const chosen = await postForm(`/campaigns/${demoId}/batches`, { ...form, starKeys: 'BFL-000001\r\n\r\nBFL-000003\r\n' }, analyst);
    expect(chosen.status).toBe(303);
    const chosenId = chosen.location!.split('/').pop()!;
    expect(run.app.db.$client.prepare('SELECT star_count FROM batches WHERE id = ?').pluck().get(chosenId)).toBe(2);
    const unknown = await postForm(`/campaigns/${demoId}/batches`, { ...form, starKeys: 'BFL-000001\nBFL-999999' }, analyst);
    expect(unknown.status).toBe(400);
    expect(unknown.html).toContain('not in this campaign: &quot;BFL-999999&quot;');
  });

  it('keep the admin area for admins', async () => {
    const guest = await signInCookie(run.baseUrl, people.collaborator.email, people.collaborator.password);
    expect((await get('/admin/outbox', guest)).status).toBe(403);
    const admin = await signInCookie(run.baseUrl, people.admin.email, people.admin.password);
    const outbox = await get('/admin/outbox', admin);
    expect(outbox.status).toBe(200);
    expect(outbox.html).toContain('visitor@lanternfield.test');
  });
});

describe('sign-in form with the rate limit on', () => {
  it('refuses the eleventh attempt within a minute with 429 and a clear message', async () => {
    const limited = await startApp({ env: { AUTH_RATE_LIMIT: 'on' } });
    try {
      // A different account each time: one account is already made to wait after its third failure
      // (tests/e2e/security.test.ts); this is the per-address limit on the form.
      let n = 0;
      const attempt = async () => {
        const res = await fetch(`${limited.baseUrl}/sign-in`, {
          method: 'POST',
          headers: { 'content-type': 'application/x-www-form-urlencoded', origin: limited.baseUrl },
          body: new URLSearchParams({ email: `guess-${n++}@lanternfield.test`, password: 'guessing-again' }),
          redirect: 'manual',
        });
        return { status: res.status, html: await res.text() };
      };
      for (let i = 0; i < 10; i++) expect((await attempt()).status).toBe(401);
      const blocked = await attempt();
      expect(blocked.status).toBe(429);
      expect(blocked.html).toMatch(/Too many attempts\. Wait \d+ seconds/);
    } finally {
      await limited.stop();
    }
  });
});
