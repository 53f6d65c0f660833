// People (admin): listing with kinds and campaign roles, changing kinds, invitations through the
// outbox, deactivation (sessions end, sign-in refused, API tokens stop), and the audit log.
// Real migrated SQLite and real better-auth sessions; the middleware's own path is exercised over
// HTTP in tests/e2e/people.http.test.ts.
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { resolveActor } from '../src/app/app';
import { actorFromBearer, createApiToken } from '../src/server/api-tokens';
import type { Actor } from '../src/server/context';
import { activeActor, auditLog, deactivatePerson, listPeople, reactivatePerson, setKind } from '../src/server/people';
import { GET as peopleRoute, POST as inviteRoute } from '../src/pages/api/admin/people/index';
import { POST as deactivateRoute } from '../src/pages/api/admin/people/[userId]/deactivate';
import { POST as kindRoute } from '../src/pages/api/admin/people/[userId]/kind';
import { GET as auditRoute } from '../src/pages/api/admin/audit';
import { createTestApp, type TestApp } from './setup/db';
import { addToCampaign, DEFAULT_TEST_PASSWORD, makeCampaign, makeUser } from '../src/seed/factories';

type Route = (ctx: never) => Promise<Response> | Response;
async function call(route: Route, actor: Actor | null, params: Record<string, string> = {}, body?: unknown, query = '') {
  const url = new URL(`http://127.0.0.1/api/test${query}`);
  const request = new Request(url, body === undefined ? {} : { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  const res = await route({ locals: { app: t.app, actor, authMethod: actor ? 'session' : null }, params, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

let t: TestApp;
let admin: Actor;
beforeEach(async () => {
  t = createTestApp();
  admin = await makeUser(t.app, { kind: 'admin', name: 'Ada Admin' });
});
afterEach(() => t.cleanup());

async function signIn(email: string): Promise<{ status: number; cookie: string }> {
  const res = await t.app.auth.api.signInEmail({ body: { email, password: DEFAULT_TEST_PASSWORD }, asResponse: true });
  const cookie = (res.headers.get('set-cookie') ?? '').split(';')[0];
  return { status: res.status, cookie };
}

describe('people list', () => {
  it('shows kinds and campaign roles, pages on the server, and filters by name or e-mail', async () => {
    const analyst = await makeUser(t.app, { name: 'Rowan Field' });
    const guest = await makeUser(t.app, { kind: 'guest', name: 'Gale Visitor' });
    const c = makeCampaign(t.app, analyst, { name: 'Lanternfield season two' });
    await addToCampaign(t.app, analyst, c.id, guest, ['collaborator']);
    const all = listPeople(t.db);
    expect(all.total).toBe(3);
    const rowan = all.people.find((p) => p.id === analyst.id)!;
    expect(rowan).toMatchObject({ kind: 'member', deactivatedAt: null, campaigns: [{ id: c.id, name: 'Lanternfield season two', roles: ['analyst'] }] });
    expect(all.people.find((p) => p.id === guest.id)!.campaigns[0].roles).toEqual(['collaborator']);
    expect(listPeople(t.db, { limit: 1, offset: 1 }).people).toHaveLength(1);
    expect(listPeople(t.db, { q: 'gale' }).people.map((p) => p.id)).toEqual([guest.id]);
    expect((await call(peopleRoute, analyst)).status).toBe(403);
    expect((await call(peopleRoute, null)).status).toBe(401);
    expect((await call(peopleRoute, admin)).body.total).toBe(3);
  });
});

describe('kinds', () => {
  it('an admin changes a kind; guests cannot hold analyst roles; the last admin stays; each change is audited', async () => {
    const member = await makeUser(t.app);
    makeCampaign(t.app, member);
    expect((await call(kindRoute, admin, { userId: member.id }, { kind: 'guest' })).body.error.message).toMatch(/guests can only be collaborators/);
    expect((await call(kindRoute, admin, { userId: admin.id }, { kind: 'member' })).body.error.message).toMatch(/last active admin/);
    const r = await call(kindRoute, admin, { userId: member.id }, { kind: 'admin' });
    expect(r.status).toBe(200);
    expect(r.body.person.kind).toBe('admin');
    expect((await call(kindRoute, { ...member, kind: 'admin' }, { userId: admin.id }, { kind: 'member' })).status).toBe(200);
    expect((await call(kindRoute, admin, { userId: member.id }, { kind: 'wizard' })).body.error.message).toMatch(/kind must be one of admin, member, guest/);
    const log = auditLog(t.db).entries.filter((e) => e.action === 'person.kind_changed');
    expect(log.map((e) => [e.actor?.id, e.details.from, e.details.to])).toEqual([
      [member.id, 'admin', 'member'],
      [admin.id, 'member', 'admin'],
    ]);
  });
});

describe('invitations', () => {
  it('an admin invites an address to a campaign; the e-mail goes through the outbox', async () => {
    const analyst = await makeUser(t.app);
    const c = makeCampaign(t.app, analyst);
    const r = await call(inviteRoute, admin, {}, { campaignId: c.id, email: 'newcomer@lanternfield.test', roles: ['reviewer'] });
    expect(r.status).toBe(201);
    expect(r.body.outcome).toBe('invited');
    const mail = t.sqlite.prepare("SELECT subject, to_address FROM outbox_messages WHERE to_address = 'newcomer@lanternfield.test'").get() as { subject: string } | undefined;
    expect(mail?.subject).toBeTruthy();
    expect((await call(inviteRoute, admin, {}, { campaignId: c.id, email: 'newcomer@lanternfield.test', roles: ['reviewer'] })).status).toBe(409);
    expect((await call(inviteRoute, analyst, {}, { campaignId: c.id, email: 'x@lanternfield.test', roles: ['reviewer'] })).status).toBe(403);
    expect(auditLog(t.db).entries[0]).toMatchObject({ action: 'campaign.invitation_sent', actor: { id: admin.id }, campaign: { id: c.id } });
  });
});

describe('deactivation', () => {
  it('ends the sessions, refuses sign-in, stops API tokens; reactivation lets the person back', async () => {
    const member = await makeUser(t.app);
    const { cookie } = await signIn(member.email);
    const headers = new Headers({ cookie });
    expect((await resolveActor(t.app, headers))?.id).toBe(member.id);
    const { secret } = createApiToken(t.db, member, { name: 'nightly script' });
    const bearer = actorFromBearer(t.db, secret);
    expect(bearer.ok && activeActor(t.db, bearer.actor)?.id).toBe(member.id);

    const openSessions = t.sqlite.prepare('SELECT count(*) FROM session WHERE user_id = ?').pluck().get(member.id) as number;
    expect(openSessions).toBeGreaterThanOrEqual(1);
    expect((await call(deactivateRoute, admin, { userId: member.id }, {})).body.error.message).toMatch(/reason is required/);
    const r = await call(deactivateRoute, admin, { userId: member.id }, { reason: 'left the team' });
    expect(r.status).toBe(200);
    expect(r.body.person.deactivatedAt).toBeTruthy();
    expect(r.body.person.sessions).toBe(0);
    expect(t.sqlite.prepare('SELECT count(*) FROM session WHERE user_id = ?').pluck().get(member.id)).toBe(0);
    // The old cookie no longer identifies anyone; signing in again is refused.
    expect(await resolveActor(t.app, headers)).toBeNull();
    expect((await signIn(member.email)).status).toBe(403);
    // The token still exists but the check every request goes through refuses its owner.
    const after = actorFromBearer(t.db, secret);
    expect(after.ok).toBe(true);
    expect(after.ok && activeActor(t.db, after.actor)).toBeNull();

    const log = auditLog(t.db).entries.find((e) => e.action === 'person.deactivated')!;
    expect(log).toMatchObject({ actor: { id: admin.id, name: 'Ada Admin' }, details: { userId: member.id, reason: 'left the team', sessionsEnded: openSessions } });

    reactivatePerson(t.db, admin, member.id);
    expect((await signIn(member.email)).status).toBe(200);
    const again = actorFromBearer(t.db, secret);
    expect(again.ok && activeActor(t.db, again.actor)?.id).toBe(member.id);
  });

  it('an admin cannot deactivate themselves or the last admin; only admins deactivate', async () => {
    const member = await makeUser(t.app);
    expect(() => deactivatePerson(t.db, admin, admin.id, { reason: 'oops' })).toThrow(/cannot deactivate your own account/);
    expect((await call(deactivateRoute, member, { userId: admin.id }, { reason: 'coup' })).status).toBe(403);
    expect((await call(deactivateRoute, null, { userId: admin.id }, { reason: 'coup' })).status).toBe(401);
    const other = await makeUser(t.app, { kind: 'admin' });
    deactivatePerson(t.db, admin, other.id, { reason: 'spare account' });
    expect(() => setKind(t.db, admin, admin.id, { kind: 'member' })).toThrow(/last active admin/);
  });
});

describe('audit log', () => {
  it('lists admin actions with who, what and when, newest first, keyset-paged; campaign work only with scope=all', async () => {
    const member = await makeUser(t.app);
    makeCampaign(t.app, member);
    for (let i = 0; i < 3; i++) {
      setKind(t.db, admin, member.id, { kind: i % 2 === 0 ? 'admin' : 'member' });
    }
    const first = await call(auditRoute, admin, {}, undefined, '?limit=2');
    expect(first.status).toBe(200);
    expect(first.body.total).toBe(3);
    expect(first.body.entries).toHaveLength(2);
    expect(first.body.entries[0]).toMatchObject({ action: 'person.kind_changed', actor: { id: admin.id, name: 'Ada Admin' }, details: { to: 'admin' } });
    expect(Date.parse(first.body.entries[0].createdAt)).toBeGreaterThan(Date.now() - 60_000);
    const second = await call(auditRoute, admin, {}, undefined, `?limit=2&before=${first.body.nextBefore}`);
    expect(second.body.entries).toHaveLength(1);
    expect(second.body.nextBefore).toBeNull();
    const all = await call(auditRoute, admin, {}, undefined, '?scope=all');
    expect(all.body.entries.some((e: { action: string }) => e.action === 'campaign.created')).toBe(true);
    expect((await call(auditRoute, member, {}, undefined, '')).status).toBe(403);
  });
});
