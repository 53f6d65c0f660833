// Sign-up, invitations and password reset, with better-auth on a real migrated SQLite.
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { count, eq } from 'drizzle-orm';
import { account, campaignMembers, invitations, outboxMessages, user } from '../src/db/schema';
import { changePassword, registerAccount, requestPasswordReset, resetPassword } from '../src/server/accounts';
import { addMember, listCampaignsForUser } from '../src/server/campaigns';
import { HttpError } from '../src/server/errors';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
beforeEach(() => {
  t = createTestApp();
});
afterEach(() => t.cleanup());

const users = () => t.db.select({ n: count() }).from(user).get()!.n;

async function caught(p: Promise<unknown>): Promise<HttpError> {
  try {
    await p;
  } catch (err) {
    expect(err).toBeInstanceOf(HttpError);
    return err as HttpError;
  }
  throw new Error('expected an HttpError');
}

function inviteToken(email: string): string {
  const mail = t.db.select().from(outboxMessages).where(eq(outboxMessages.toAddress, email)).all().at(-1)!;
  const m = /invite=([A-Za-z0-9_-]+)/.exec(mail.textBody);
  if (!m) throw new Error('no invitation link in the e-mail');
  return decodeURIComponent(m[1]);
}

describe('registerAccount', () => {
  it('makes the first account of a fresh installation an admin and signs it in', async () => {
    const { userId, response } = await registerAccount(t.app, { name: 'First Person', email: 'First@Example.test', password: 'a-long-password' });
    const row = t.db.select().from(user).where(eq(user.id, userId)).get()!;
    expect(row).toMatchObject({ kind: 'admin', email: 'first@example.test' });
    expect(response.headers.getSetCookie().join(';')).toMatch(/session_token=/);
  });

  it('is closed to walk-ins once someone exists, unless SIGNUP_OPEN is true', async () => {
    await makeUser(t.app, { kind: 'admin' });
    const e = await caught(registerAccount(t.app, { name: 'Walk In', email: 'walkin@example.test', password: 'a-long-password' }));
    expect(e.status).toBe(403);
    expect(e.message).toMatch(/by invitation/);
    expect(users()).toBe(1);

    const open = createTestApp({ SIGNUP_OPEN: 'true' });
    try {
      await makeUser(open.app, { kind: 'admin' });
      const { userId } = await registerAccount(open.app, { name: 'Walk In', email: 'walkin@example.test', password: 'a-long-password' });
      expect(open.db.select().from(user).where(eq(user.id, userId)).get()!.kind).toBe('member');
    } finally {
      open.cleanup();
    }
  });

  it.each([
    [{ name: 'X', email: 'not an address', password: 'a-long-password' }, 'email', /valid e-mail/],
    [{ name: 'X', email: 'x@example.test', password: 'short' }, 'password', /at least 10 characters/],
    [{ name: '', email: 'x@example.test', password: 'a-long-password' }, 'name', /Enter your name/],
    [{ email: 'x@example.test', password: 'a-long-password' }, 'name', /name is required/],
    [{ name: 'X', email: 'x@example.test', password: 'p'.repeat(129) }, 'password', /at most 128/],
  ])('rejects %j with a clear message and writes nothing', async (input, field, message) => {
    const e = await caught(registerAccount(t.app, input));
    expect(e.status).toBe(400);
    expect(e.field).toBe(field);
    expect(e.message).toMatch(message);
    expect(users()).toBe(0);
    expect(t.db.select({ n: count() }).from(account).get()!.n).toBe(0);
  });

  it('refuses a second account for the same e-mail, in any case', async () => {
    const open = createTestApp({ SIGNUP_OPEN: 'true' });
    try {
      await registerAccount(open.app, { name: 'One', email: 'one@example.test', password: 'a-long-password' });
      const e = await caught(registerAccount(open.app, { name: 'Again', email: 'ONE@example.test', password: 'another-password' }));
      expect(e.status).toBe(409);
      expect(e.field).toBe('email');
      expect(e.message).toMatch(/already exists/);
      expect(open.db.select({ n: count() }).from(user).get()!.n).toBe(1);
    } finally {
      open.cleanup();
    }
  });

  it('accepts an invitation link only once', async () => {
    const ana = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    await addMember(t.app, ana, c.id, { email: 'three@example.test', roles: ['collaborator'] });
    const token = inviteToken('three@example.test');
    await registerAccount(t.app, { name: 'Three', email: 'three@example.test', password: 'a-long-password', invitation: token });
    const e = await caught(registerAccount(t.app, { name: 'Three again', email: 'three@example.test', password: 'a-long-password', invitation: token }));
    expect(e.status).toBe(400);
    expect(e.field).toBe('invitation');
    expect(users()).toBe(2);
  });

  it('turns a collaborator invitation into a guest account that is a member of the campaign', async () => {
    const ana = await makeUser(t.app);
    const c = makeCampaign(t.app, ana, { name: 'Brindle Reach' });
    await addMember(t.app, ana, c.id, { email: 'guest.person@example.test', roles: ['collaborator'] });
    const token = inviteToken('guest.person@example.test');

    const wrong = await caught(registerAccount(t.app, { name: 'G', email: 'other@example.test', password: 'a-long-password', invitation: token }));
    expect(wrong.field).toBe('email');
    expect(wrong.message).toContain('guest.person@example.test');

    const { userId } = await registerAccount(t.app, { name: 'Guest Person', email: 'guest.person@example.test', password: 'a-long-password', invitation: token });
    expect(t.db.select().from(user).where(eq(user.id, userId)).get()!.kind).toBe('guest');
    expect(listCampaignsForUser(t.db, userId).map((x) => [x.name, x.myRoles])).toEqual([['Brindle Reach', ['collaborator']]]);
    expect(t.db.select().from(invitations).get()!.acceptedUserId).toBe(userId);
  });

  it('makes a team member of someone invited as reviewer, accepting every open invitation', async () => {
    const ana = await makeUser(t.app);
    const c1 = makeCampaign(t.app, ana);
    const c2 = makeCampaign(t.app, ana);
    await addMember(t.app, ana, c1.id, { email: 'rev@example.test', roles: ['reviewer'] });
    await addMember(t.app, ana, c2.id, { email: 'rev@example.test', roles: ['collaborator'] });
    const { userId } = await registerAccount(t.app, { name: 'Rev', email: 'rev@example.test', password: 'a-long-password', invitation: inviteToken('rev@example.test') });
    expect(t.db.select().from(user).where(eq(user.id, userId)).get()!.kind).toBe('member');
    expect(t.db.select().from(campaignMembers).where(eq(campaignMembers.userId, userId)).all()).toHaveLength(2);
  });

  it('refuses an expired invitation', async () => {
    const ana = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    await addMember(t.app, ana, c.id, { email: 'late@example.test', roles: ['collaborator'] });
    const token = inviteToken('late@example.test');
    t.db.update(invitations).set({ expiresAt: new Date(Date.now() - 1) }).run();
    const e = await caught(registerAccount(t.app, { name: 'Late', email: 'late@example.test', password: 'a-long-password', invitation: token }));
    expect(e.field).toBe('invitation');
    expect(users()).toBe(1);
  });
});

describe('better-auth sign-up endpoint', () => {
  it('refuses accounts created outside our use cases', async () => {
    const res = await t.app.auth.handler(
      new Request('http://127.0.0.1:4321/api/auth/sign-up/email', {
        method: 'POST',
        headers: { 'content-type': 'application/json', origin: 'http://127.0.0.1:4321' },
        body: JSON.stringify({ name: 'Sneaky', email: 'sneaky@example.test', password: 'a-long-password' }),
      }),
    );
    expect(res.status).toBe(403);
    expect(users()).toBe(0);
  });
});

describe('password reset', () => {
  it('mails a link through the outbox; the link sets a new password once', async () => {
    const person = await makeUser(t.app, { email: 'forgetful@example.test', password: 'the-old-password' });
    await requestPasswordReset(t.app, { email: ' Forgetful@Example.test ' });
    const mail = t.db.select().from(outboxMessages).where(eq(outboxMessages.kind, 'password-reset')).all();
    expect(mail).toHaveLength(1);
    expect(mail[0].toAddress).toBe(person.email);
    const token = /reset-password\?token=([A-Za-z0-9_-]+)/.exec(mail[0].textBody)![1];

    const short = await caught(resetPassword(t.app, { token, password: 'short' }));
    expect(short.field).toBe('password');
    await resetPassword(t.app, { token, password: 'the-new-password' });
    const again = await caught(resetPassword(t.app, { token, password: 'another-password' }));
    expect(again.field).toBe('token');

    const signIn = (password: string) =>
      t.app.auth.api.signInEmail({ body: { email: person.email, password }, asResponse: true }).then((r) => r.status);
    expect(await signIn('the-new-password')).toBe(200);
    expect(await signIn('the-old-password')).toBe(401);
  });

  it('answers the same for an unknown address and sends nothing', async () => {
    await requestPasswordReset(t.app, { email: 'nobody@example.test' });
    expect(t.db.select().from(outboxMessages).all()).toHaveLength(0);
    const bad = await caught(requestPasswordReset(t.app, { email: 'nope' }));
    expect(bad.field).toBe('email');
  });
});

describe('changePassword (signed in)', () => {
  async function session(email: string, password: string): Promise<Headers> {
    const res = await t.app.auth.api.signInEmail({ body: { email, password }, asResponse: true });
    expect(res.status).toBe(200);
    return new Headers({ cookie: res.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ') });
  }
  const signIn = (email: string, password: string) => t.app.auth.api.signInEmail({ body: { email, password }, asResponse: true }).then((r) => r.status);
  const signedIn = async (headers: Headers) => (await t.app.auth.api.getSession({ headers })) !== null;

  it('needs the current password, refuses a weak or unchanged one, and changes nothing when it refuses', async () => {
    const person = await makeUser(t.app, { email: 'changer@example.test', name: 'Ada Changer', password: 'the-old-password' });
    const headers = await session(person.email, 'the-old-password');
    const wrong = await caught(changePassword(t.app, person, { currentPassword: 'not-the-password', password: 'a-fresh-long-password' }, headers));
    expect([wrong.status, wrong.field]).toEqual([400, 'currentPassword']);
    const weak = await caught(changePassword(t.app, person, { currentPassword: 'the-old-password', password: 'changer123456' }, headers));
    expect(weak.field).toBe('password');
    const same = await caught(changePassword(t.app, person, { currentPassword: 'the-old-password', password: 'the-old-password' }, headers));
    expect(same.field).toBe('password');
    expect(await signIn(person.email, 'the-old-password')).toBe(200);
  });

  it('sets the new password; other sessions end only when asked, and this one carries on under a new cookie', async () => {
    const person = await makeUser(t.app, { email: 'mover@example.test', password: 'the-old-password' });
    const here = await session(person.email, 'the-old-password');
    const laptop = await session(person.email, 'the-old-password');
    await changePassword(t.app, person, { currentPassword: 'the-old-password', password: 'a-fresh-long-password' }, here);
    expect(await signIn(person.email, 'a-fresh-long-password')).toBe(200);
    expect(await signIn(person.email, 'the-old-password')).toBe(401);
    expect(await signedIn(laptop)).toBe(true);

    const answer = await changePassword(t.app, person, { currentPassword: 'a-fresh-long-password', password: 'yet-another-long-password', signOutOthers: true }, here);
    const renewed = new Headers({ cookie: answer.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ') });
    expect(renewed.get('cookie')).toMatch(/session_token=/);
    expect(await signedIn(renewed)).toBe(true);
    expect(await signedIn(laptop)).toBe(false);
  });

  it('asks a visitor whose session is gone to sign in again', async () => {
    const person = await makeUser(t.app, { email: 'gone@example.test', password: 'the-old-password' });
    const e = await caught(changePassword(t.app, person, { currentPassword: 'the-old-password', password: 'a-fresh-long-password' }, new Headers()));
    expect(e.status).toBe(401);
    expect(await signIn(person.email, 'the-old-password')).toBe(200);
  });
});
