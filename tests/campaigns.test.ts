// Campaign use cases against a real migrated SQLite (one fresh file per test).
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { count, eq } from 'drizzle-orm';
import { auditEvents, campaignMemberRoles, campaignMembers, campaigns, invitations, outboxMessages } from '../src/db/schema';
import { addMember, createCampaign, getCampaignOverview, listCampaignsForUser } from '../src/server/campaigns';
import { HttpError } from '../src/server/errors';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
beforeEach(() => {
  t = createTestApp();
});
afterEach(() => t.cleanup());

function rowCount(table: typeof campaigns | typeof campaignMembers | typeof invitations | typeof outboxMessages | typeof auditEvents | typeof campaignMemberRoles) {
  return t.db.select({ n: count() }).from(table).get()!.n;
}

async function expectHttpError(p: Promise<unknown> | (() => unknown), status: number, field?: string): Promise<HttpError> {
  let caught: unknown;
  try {
    await (typeof p === 'function' ? p() : p);
  } catch (err) {
    caught = err;
  }
  expect(caught).toBeInstanceOf(HttpError);
  const e = caught as HttpError;
  expect(e.status).toBe(status);
  if (field) expect(e.field).toBe(field);
  return e;
}

describe('createCampaign', () => {
  it('makes the creator its analyst and lists it for them only', async () => {
    const ana = await makeUser(t.app, { kind: 'member' });
    const other = await makeUser(t.app, { kind: 'member' });
    const c = createCampaign(t.db, ana, { name: '  Veil   Lantern  dwarfs ', description: 'cool dwarfs' });
    expect(c.name).toBe('Veil Lantern dwarfs');
    expect(c.myRoles).toEqual(['analyst']);
    expect(listCampaignsForUser(t.db, ana.id).map((x) => x.id)).toEqual([c.id]);
    expect(listCampaignsForUser(t.db, other.id)).toEqual([]);
    expect(rowCount(auditEvents)).toBe(1);
  });

  it('refuses a guest and writes nothing', async () => {
    const guest = await makeUser(t.app, { kind: 'guest' });
    const e = await expectHttpError(() => createCampaign(t.db, guest, { name: 'Guest campaign' }), 403);
    expect(e.message).toMatch(/Guest accounts cannot create campaigns/);
    expect(rowCount(campaigns)).toBe(0);
  });

  it('refuses a duplicate name regardless of case and spacing, naming the field', async () => {
    const ana = await makeUser(t.app);
    createCampaign(t.db, ana, { name: 'Ember Ridge' });
    const e = await expectHttpError(() => createCampaign(t.db, ana, { name: ' ember   RIDGE' }), 409, 'name');
    expect(e.message).toMatch(/already exists/);
    expect(rowCount(campaigns)).toBe(1);
    expect(rowCount(campaignMembers)).toBe(1);
  });

  it.each([
    [{ name: 'ab' }, 'name', /at least 3/],
    [{ name: 'x'.repeat(81) }, 'name', /at most 80/],
    [{}, 'name', /name is required/],
    [{ name: 42 }, 'name', /name/],
    [{ name: 'Fine name', description: 'd'.repeat(2001) }, 'description', /at most 2000/],
  ])('rejects bad input %j with a clear message', async (input, field, message) => {
    const ana = await makeUser(t.app);
    const e = await expectHttpError(() => createCampaign(t.db, ana, input), 400, field);
    expect(e.message).toMatch(message);
    expect(rowCount(campaigns)).toBe(0);
  });
});

describe('addMember', () => {
  it('adds a known account with several roles at once', async () => {
    const ana = await makeUser(t.app);
    const rev = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    const result = await addMember(t.app, ana, c.id, { email: rev.email.toUpperCase(), roles: ['reviewer', 'collaborator'] });
    expect(result.outcome).toBe('added');
    const overview = getCampaignOverview(t.db, ana, c.id);
    expect(overview.members.find((m) => m.userId === rev.id)?.roles).toEqual(['reviewer', 'collaborator']);
    expect(listCampaignsForUser(t.db, rev.id)[0].myRoles).toEqual(['reviewer', 'collaborator']);
  });

  it('refuses a member added twice and changes nothing', async () => {
    const ana = await makeUser(t.app);
    const rev = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    await addMember(t.app, ana, c.id, { email: rev.email, roles: ['reviewer'] });
    const before = rowCount(campaignMemberRoles);
    const e = await expectHttpError(addMember(t.app, ana, c.id, { email: rev.email, roles: ['collaborator'] }), 409, 'email');
    expect(e.message).toMatch(/already a member/);
    expect(rowCount(campaignMemberRoles)).toBe(before);
  });

  it('lets a guest be a collaborator only', async () => {
    const ana = await makeUser(t.app);
    const guest = await makeUser(t.app, { kind: 'guest' });
    const c = makeCampaign(t.app, ana);
    await expectHttpError(addMember(t.app, ana, c.id, { email: guest.email, roles: ['reviewer'] }), 400, 'roles');
    expect((await addMember(t.app, ana, c.id, { email: guest.email, roles: ['collaborator'] })).outcome).toBe('added');
  });

  it.each([
    [{ email: 'not-an-address', roles: ['reviewer'] }, 'email'],
    [{ email: 'someone@example.test', roles: [] }, 'roles'],
    [{ email: 'someone@example.test', roles: ['owner'] }, 'roles.0'],
    [{ roles: ['reviewer'] }, 'email'],
  ])('rejects bad member input %j', async (input, field) => {
    const ana = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    await expectHttpError(addMember(t.app, ana, c.id, input), 400, field);
    expect(rowCount(invitations)).toBe(0);
    expect(rowCount(outboxMessages)).toBe(0);
  });

  it('invites an unknown address through the outbox, once', async () => {
    const ana = await makeUser(t.app, { name: 'Ada Analyst' });
    const c = makeCampaign(t.app, ana, { name: 'Quiet Giants' });
    const result = await addMember(t.app, ana, c.id, { email: 'New.Person@Example.test', roles: ['collaborator'] });
    expect(result.outcome).toBe('invited');
    const mail = t.db.select().from(outboxMessages).all();
    expect(mail).toHaveLength(1);
    expect(mail[0]).toMatchObject({ kind: 'invitation', toAddress: 'new.person@example.test', status: 'stored', transport: 'outbox' });
    expect(mail[0].subject).toContain('Quiet Giants');
    expect(mail[0].textBody).toMatch(/http:\/\/127\.0\.0\.1:4321\/sign-up\?invite=[A-Za-z0-9_-]{20,}/);
    expect(mail[0].textBody).toContain('Ada Analyst');
    const e = await expectHttpError(addMember(t.app, ana, c.id, { email: 'new.person@example.test', roles: ['reviewer'] }), 409, 'email');
    expect(e.message).toMatch(/already been invited/);
    expect(rowCount(outboxMessages)).toBe(1);
    expect(rowCount(invitations)).toBe(1);
  });

  it('replaces an expired invitation', async () => {
    const ana = await makeUser(t.app);
    const c = makeCampaign(t.app, ana);
    await addMember(t.app, ana, c.id, { email: 'late@example.test', roles: ['collaborator'] });
    t.db.update(invitations).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(invitations.email, 'late@example.test')).run();
    expect((await addMember(t.app, ana, c.id, { email: 'late@example.test', roles: ['collaborator'] })).outcome).toBe('invited');
    expect(rowCount(invitations)).toBe(1);
    expect(rowCount(outboxMessages)).toBe(2);
  });

  it('reports an unknown campaign as 404', async () => {
    const ana = await makeUser(t.app);
    await expectHttpError(addMember(t.app, ana, 'nope', { email: 'x@example.test', roles: ['reviewer'] }), 404);
  });
});
