// Every role against the real built server over HTTP: who gets 200/201, who gets 401, 403 or 404 as JSON.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq } from 'drizzle-orm';
import { campaigns, outboxMessages } from '../../src/db/schema';
import { DEMO_CAMPAIGN, demoUsers } from '../../src/seed/seed';
import { nameKey } from '../../src/server/campaigns';
import { appVersion } from '../../src/server/health';
import { callApi, signInCookie, startApp, type RunningApp } from './harness';

let run: RunningApp;
let demoCampaignId: string;
const cookies: Record<'admin' | 'analyst' | 'reviewer' | 'collaborator', string> = { admin: '', analyst: '', reviewer: '', collaborator: '' };
const people = demoUsers();

beforeAll(async () => {
  run = await startApp();
  demoCampaignId = run.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get()!.id;
  for (const role of Object.keys(cookies) as (keyof typeof cookies)[]) {
    cookies[role] = await signInCookie(run.baseUrl, people[role].email, people[role].password);
  }
});
afterAll(async () => {
  await run?.stop();
});

function expectJsonError(r: { status: number; body: unknown; contentType: string | null }, status: number, code?: string) {
  expect(r.status, JSON.stringify(r.body)).toBe(status);
  expect(r.contentType).toMatch(/application\/json/);
  const err = (r.body as { error: { code: string; message: string } }).error;
  expect(err.message.length).toBeGreaterThan(5);
  if (code) expect(err.code).toBe(code);
}

describe('health', () => {
  it('reports the version and a reachable, migrated database', async () => {
    const r = await callApi(run.baseUrl, '/api/health');
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ status: 'ok', version: appVersion(), database: { reachable: true, migrated: true } });
  });
});

describe('anonymous', () => {
  it.each([
    ['GET', '/api/campaigns'],
    ['POST', '/api/campaigns'],
    ['GET', '/api/me'],
    ['GET', '/api/campaigns/DEMO'],
    ['POST', '/api/campaigns/DEMO/members'],
    ['GET', '/api/admin/outbox'],
    ['GET', '/api/admin/users'],
  ])('%s %s is 401 JSON', async (method, p) => {
    const r = await callApi(run.baseUrl, p.replace('DEMO', demoCampaignId), {
      method,
      json: method === 'POST' ? { name: 'x', email: 'a@b.test', roles: ['reviewer'] } : undefined,
    });
    expectJsonError(r, 401, 'unauthenticated');
  });

  it('cannot create an account through better-auth directly', async () => {
    const r = await callApi(run.baseUrl, '/api/auth/sign-up/email', { json: { name: 'Sneaky', email: 'sneaky@example.test', password: 'long-enough-password' } });
    expect(r.status).toBe(403);
  });

  it('cannot sign up without an invitation', async () => {
    const r = await callApi(run.baseUrl, '/api/sign-up', { json: { name: 'Walk In', email: 'walkin@example.test', password: 'long-enough-password' } });
    expectJsonError(r, 403, 'forbidden');
  });
});

describe('analyst (team member)', () => {
  it('lists their campaigns and creates one, becoming its analyst', async () => {
    const list = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.analyst });
    expect(list.status).toBe(200);
    expect((list.body as { campaigns: { id: string }[] }).campaigns.map((c) => c.id)).toContain(demoCampaignId);
    const created = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.analyst, json: { name: 'Analyst API campaign' } });
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ campaign: { name: 'Analyst API campaign', myRoles: ['analyst'] } });
  });

  it('adds members to their campaign and invites unknown addresses', async () => {
    const added = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}/members`, {
      cookie: cookies.analyst,
      json: { email: 'new.colleague@example.test', roles: ['reviewer'] },
    });
    expect(added.status).toBe(201);
    expect(added.body).toMatchObject({ outcome: 'invited', invitation: { email: 'new.colleague@example.test' } });
    const mail = run.app.db.select().from(outboxMessages).where(eq(outboxMessages.toAddress, 'new.colleague@example.test')).all();
    expect(mail).toHaveLength(1);
    expect(mail[0].textBody).toContain(`${run.baseUrl}/sign-up?invite=`);
  });

  it('gets 400 for malformed JSON and 409 for a duplicate name, with clear messages', async () => {
    const bad = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.analyst, rawBody: '{"name": "oops",' });
    expectJsonError(bad, 400, 'invalid_json');
    expect((bad.body as { error: { message: string } }).error.message).toMatch(/not valid JSON/);
    const dup = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.analyst, json: { name: DEMO_CAMPAIGN.name.toUpperCase() } });
    expectJsonError(dup, 409, 'conflict');
    expect((dup.body as { error: { field: string } }).error.field).toBe('name');
  });

  it('is 403 in the admin area', async () => {
    expectJsonError(await callApi(run.baseUrl, '/api/admin/outbox', { cookie: cookies.analyst }), 403, 'forbidden');
  });
});

describe('reviewer (team member)', () => {
  it('reads the campaign but cannot add members to it', async () => {
    const r = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}`, { cookie: cookies.reviewer });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ myRoles: ['reviewer'], canManageMembers: false, invitations: [] });
    const add = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}/members`, {
      cookie: cookies.reviewer,
      json: { email: 'someone@example.test', roles: ['collaborator'] },
    });
    expectJsonError(add, 403, 'forbidden');
  });

  it('may create a campaign of their own (team members can)', async () => {
    const r = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.reviewer, json: { name: 'Reviewer side project' } });
    expect(r.status).toBe(201);
  });

  it('is 403 in the admin area', async () => {
    expectJsonError(await callApi(run.baseUrl, '/api/admin/users', { cookie: cookies.reviewer }), 403, 'forbidden');
  });
});

describe('collaborator (guest)', () => {
  it('reads the campaign it was invited to', async () => {
    const r = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}`, { cookie: cookies.collaborator });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ myRoles: ['collaborator'] });
  });

  it('cannot create a campaign, and nothing is written', async () => {
    const before = run.app.db.select().from(campaigns).all().length;
    const r = await callApi(run.baseUrl, '/api/campaigns', { cookie: cookies.collaborator, json: { name: 'Guest attempt' } });
    expectJsonError(r, 403, 'forbidden');
    expect(run.app.db.select().from(campaigns).all().length).toBe(before);
  });

  it('cannot add members or open a campaign it does not belong to', async () => {
    const add = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}/members`, {
      cookie: cookies.collaborator,
      json: { email: 'friend@example.test', roles: ['collaborator'] },
    });
    expectJsonError(add, 403, 'forbidden');
    const other = run.app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey('Reviewer side project'))).get()!;
    // Not a member: the same 404 as for a campaign that does not exist.
    expectJsonError(await callApi(run.baseUrl, `/api/campaigns/${other.id}`, { cookie: cookies.collaborator }), 404, 'not_found');
    expectJsonError(await callApi(run.baseUrl, '/api/campaigns/doesnotexist', { cookie: cookies.collaborator }), 404, 'not_found');
  });

  it('is 403 in the admin area', async () => {
    expectJsonError(await callApi(run.baseUrl, '/api/admin/outbox', { cookie: cookies.collaborator }), 403, 'forbidden');
  });
});

describe('admin', () => {
  it('reads the outbox and the people list', async () => {
    const outbox = await callApi(run.baseUrl, '/api/admin/outbox', { cookie: cookies.admin });
    expect(outbox.status).toBe(200);
    expect((outbox.body as { total: number }).total).toBeGreaterThanOrEqual(1);
    const users = await callApi(run.baseUrl, '/api/admin/users', { cookie: cookies.admin });
    expect((users.body as { users: { email: string; kind: string }[] }).users).toContainEqual(
      expect.objectContaining({ email: people.collaborator.email, kind: 'guest' }),
    );
  });

  it('oversees a campaign it is not a member of and can add members to it', async () => {
    const r = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}`, { cookie: cookies.admin });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ myRoles: [], canManageMembers: true });
    const add = await callApi(run.baseUrl, `/api/campaigns/${demoCampaignId}/members`, {
      cookie: cookies.admin,
      json: { email: 'extra.reviewer@example.test', roles: ['reviewer'] },
    });
    expect(add.status).toBe(201);
  });

  it('gets 404 JSON for an unknown campaign', async () => {
    expectJsonError(await callApi(run.baseUrl, '/api/campaigns/doesnotexist', { cookie: cookies.admin }), 404, 'not_found');
  });
});
