// People in a campaign after the fact, against a real migrated SQLite: changing and removing a
// member's roles (the last analyst stays), revoking an open invitation (its link then fails), an
// admin seeing every campaign, archiving a campaign (no batches or imports until restored), and
// withdrawing an upload with everything it imported in one transaction — through the use cases and
// the API routes.
import { existsSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DELETE as removeRoute, PUT as rolesRoute } from '../src/pages/api/campaigns/[id]/members/[userId]';
import { DELETE as revokeRoute } from '../src/pages/api/campaigns/[id]/invitations/[invitationId]';
import { POST as archiveRoute } from '../src/pages/api/campaigns/[id]/archive';
import { DELETE as withdrawRoute } from '../src/pages/api/campaigns/[id]/uploads/[uploadId]/index';
import { findInvitation } from '../src/server/accounts';
import { addMember, listCampaignsForUser, listOpenInvitations } from '../src/server/campaigns';
import { startBatch } from '../src/server/batches';
import type { Actor } from '../src/server/context';
import { HttpError } from '../src/server/errors';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
beforeEach(() => {
  t = createTestApp();
});
afterEach(() => t.cleanup());

async function call(route: (ctx: never) => Promise<Response> | Response, actor: Actor | null, params: Record<string, string>, method = 'POST', body?: unknown) {
  const url = new URL('http://127.0.0.1/api/test');
  const request = new Request(url, body === undefined ? { method } : { method, headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  const res = await route({ locals: { app: t.app, actor }, params, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

const audit = (action: string) => t.sqlite.prepare('SELECT count(*) FROM audit_events WHERE action = ?').pluck().get(action) as number;

describe('members', () => {
  it('changes and removes roles, keeps the last analyst, refuses non-analysts', async () => {
    const lead = await makeUser(t.app, { name: 'Lena Lead' });
    const rev = await makeUser(t.app, { name: 'Rory Reviewer' });
    const guest = await makeUser(t.app, { kind: 'guest', name: 'Gia Guest' });
    const c = makeCampaign(t.app, lead, { name: 'Ashveil members' });
    await addToCampaign(t.app, lead, c.id, rev, ['reviewer']);
    await addToCampaign(t.app, lead, c.id, guest, ['collaborator']);
    // A reviewer cannot change roles.
    expect((await call(rolesRoute, rev, { id: c.id, userId: rev.id }, 'PUT', { roles: ['analyst'] })).status).toBe(403);
    // The analyst makes the reviewer an analyst too.
    const up = await call(rolesRoute, lead, { id: c.id, userId: rev.id }, 'PUT', { roles: ['reviewer', 'analyst'] });
    expect(up.status).toBe(200);
    expect(up.body.member.roles).toEqual(['analyst', 'reviewer']);
    // A guest stays a collaborator.
    const g = await call(rolesRoute, lead, { id: c.id, userId: guest.id }, 'PUT', { roles: ['reviewer'] });
    expect(g.status).toBe(400);
    expect(g.body.error.message).toMatch(/guest account/);
    // Two analysts: the lead may drop the role; then the reviewer is the last analyst and keeps it.
    expect((await call(rolesRoute, lead, { id: c.id, userId: lead.id }, 'PUT', { roles: ['reviewer'] })).status).toBe(200);
    const last = await call(rolesRoute, rev, { id: c.id, userId: rev.id }, 'PUT', { roles: ['reviewer'] });
    expect(last.status).toBe(409);
    expect(last.body.error.message).toMatch(/Rory Reviewer is the last analyst of this campaign/);
    const leave = await call(removeRoute, rev, { id: c.id, userId: rev.id }, 'DELETE');
    expect(leave.status).toBe(409);
    // Removing someone else: gone from the members, their audit entries stay.
    expect((await call(removeRoute, rev, { id: c.id, userId: guest.id }, 'DELETE')).status).toBe(200);
    expect(t.sqlite.prepare('SELECT count(*) FROM campaign_members WHERE campaign_id = ? AND user_id = ?').pluck().get(c.id, guest.id)).toBe(0);
    expect(t.sqlite.prepare('SELECT count(*) FROM campaign_member_roles WHERE campaign_id = ? AND user_id = ?').pluck().get(c.id, guest.id)).toBe(0);
    expect(audit('campaign.member_roles_changed')).toBe(2);
    expect(audit('campaign.member_removed')).toBe(1);
    expect((await call(removeRoute, rev, { id: c.id, userId: guest.id }, 'DELETE')).status).toBe(404);
  });

  it('lists and revokes an open invitation; its link then fails', async () => {
    const lead = await makeUser(t.app);
    const c = makeCampaign(t.app, lead, { name: 'Ashveil invitations' });
    const r = await addMember(t.app, lead, c.id, { email: 'newcomer@lanternfield.test', roles: ['reviewer'] });
    expect(r.outcome).toBe('invited');
    expect(listOpenInvitations(t.db, c.id).map((i) => i.email)).toEqual(['newcomer@lanternfield.test']);
    const mail = t.sqlite.prepare("SELECT text_body AS text, html_body AS html FROM outbox_messages WHERE kind = 'invitation'").get() as { text: string; html: string };
    const token = /invite=([^\s&"]+)/.exec(mail.text)![1];
    // The HTML part links the same address.
    expect(mail.html).toMatch(new RegExp(`<a href="[^"]*invite=${token}">`));
    expect(findInvitation(t.db, decodeURIComponent(token))).not.toBeNull();
    const id = listOpenInvitations(t.db, c.id)[0].id;
    expect((await call(revokeRoute, lead, { id: c.id, invitationId: id }, 'DELETE')).status).toBe(200);
    expect(listOpenInvitations(t.db, c.id)).toEqual([]);
    expect(findInvitation(t.db, decodeURIComponent(token))).toBeNull();
    expect(audit('campaign.invitation_revoked')).toBe(1);
    expect((await call(revokeRoute, lead, { id: c.id, invitationId: id }, 'DELETE')).status).toBe(404);
  });
});

describe('campaigns', () => {
  it('shows an admin every campaign, archives one (no new batch or upload) and restores it', async () => {
    const lead = await makeUser(t.app);
    const admin = await makeUser(t.app, { kind: 'admin' });
    const a = makeCampaign(t.app, lead, { name: 'Ashveil one' });
    const b = makeCampaign(t.app, lead, { name: 'Ashveil two' });
    expect(listCampaignsForUser(t.db, admin.id)).toEqual([]);
    expect(listCampaignsForUser(t.db, admin.id, { admin: true }).map((x) => x.id).sort()).toEqual([a.id, b.id].sort());
    t.sqlite.prepare("INSERT INTO stars (campaign_id, star_key) VALUES (?, 'Embervale')").run(a.id);
    const arch = await call(archiveRoute, lead, { id: a.id }, 'POST', { archived: true });
    expect(arch.status).toBe(200);
    expect(listCampaignsForUser(t.db, lead.id).find((x) => x.id === a.id)!.archivedAt).not.toBeNull();
    let refused: unknown;
    try {
      startBatch(t.app, lead, a.id, {});
    } catch (err) {
      refused = err;
    }
    expect(refused).toBeInstanceOf(HttpError);
    expect((refused as HttpError).message).toMatch(/archived/);
    expect(t.sqlite.prepare('SELECT count(*) FROM batches').pluck().get()).toBe(0);
    expect((await call(archiveRoute, admin, { id: a.id }, 'POST', { archived: false })).status).toBe(200);
    expect(startBatch(t.app, lead, a.id, {}).starCount).toBe(1);
  });
});

describe('withdrawing an upload', () => {
  it('removes the file, its values and the stars left with nothing, in one transaction; fitted or shared stars stay', async () => {
    const lead = await makeUser(t.app);
    const c = makeCampaign(t.app, lead, { name: 'Ashveil withdraw' });
    const dir = path.dirname(t.sqlite.name);
    const stored = path.join(dir, 'withdraw-test.csv');
    writeFileSync(stored, 'id,V\nEmbervale,9.1\n');
    const ins = t.sqlite.prepare("INSERT INTO uploads (id, campaign_id, original_name, stored_path, size_bytes, sha256, status) VALUES (?, ?, ?, ?, 1, 'x', 'imported')");
    ins.run('u1', c.id, 'first.csv', stored);
    ins.run('u2', c.id, 'second.csv', path.join(dir, 'other.csv'));
    const star = t.sqlite.prepare('INSERT INTO stars (campaign_id, star_key) VALUES (?, ?) RETURNING id').pluck();
    const only = star.get(c.id, 'Embervale') as number;
    const shared = star.get(c.id, 'Cinderholt') as number;
    const m = t.sqlite.prepare("INSERT INTO measurements (star_id, band_key, source, upload_id, mag, mag_err) VALUES (?, ?, ?, ?, 9.1, 0.02)");
    m.run(only, 'V', 'first.csv', 'u1');
    m.run(shared, 'V', 'first.csv', 'u1');
    m.run(shared, 'J', 'second.csv', 'u2');
    const res = await call(withdrawRoute, lead, { id: c.id, uploadId: 'u1' }, 'DELETE');
    expect(res.status).toBe(200);
    expect(res.body.withdrawn).toMatchObject({ originalName: 'first.csv', measurementsRemoved: 2, starsRemoved: 1, starsKept: 1 });
    expect(t.sqlite.prepare('SELECT star_key FROM stars WHERE campaign_id = ?').pluck().all(c.id)).toEqual(['Cinderholt']);
    expect(t.sqlite.prepare('SELECT band_key FROM measurements').pluck().all()).toEqual(['J']);
    expect(t.sqlite.prepare("SELECT count(*) FROM uploads WHERE id = 'u1'").pluck().get()).toBe(0);
    expect(existsSync(stored)).toBe(false);
    expect(audit('intake.upload_withdrawn')).toBe(1);
    expect((await call(withdrawRoute, lead, { id: c.id, uploadId: 'u1' }, 'DELETE')).status).toBe(404);
  });
});
