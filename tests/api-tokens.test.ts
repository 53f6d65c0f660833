// Personal API tokens, catalogue releases and the OpenAPI description, on a real migrated SQLite:
// secrets stored only as SHA-256, bearer identification with the owner's roles, revoked / expired /
// unknown tokens refused, and who may call every endpoint added with the catalogue (anonymous 401,
// outsider 404, collaborator reads and downloads, only analysts and admins release). The bearer
// path through the real middleware and server is in tests/e2e/catalogue.browser.test.ts.
import { createHash } from 'node:crypto';
import { readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { GET as catalogueRoute } from '../src/pages/api/campaigns/[id]/catalogue/index';
import { GET as countRoute } from '../src/pages/api/campaigns/[id]/catalogue/count';
import { GET as diagramsRoute } from '../src/pages/api/campaigns/[id]/catalogue/diagrams';
import { GET as downloadRoute } from '../src/pages/api/campaigns/[id]/downloads/[format]';
import { GET as listReleasesRoute, POST as releaseRoute } from '../src/pages/api/campaigns/[id]/releases/index';
import { GET as listTokensRoute, POST as createTokenRoute } from '../src/pages/api/tokens/index';
import { DELETE as revokeTokenRoute } from '../src/pages/api/tokens/[tokenId]';
import { GET as openapiRoute } from '../src/pages/api/openapi.json';
import { projectRoot } from '../src/db/paths';
import { actorFromBearer, bearerSecret, createApiToken, revokeApiToken } from '../src/server/api-tokens';
import type { Actor } from '../src/server/context';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { makeFittedCatalogue } from './factories-catalogue';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
let admin: Actor;
let analyst: Actor;
let reviewer: Actor;
let collaborator: Actor;
let collaborator2: Actor;
let outsider: Actor;
let campaignId: string;
let acceptedCount: number;

beforeAll(async () => {
  t = createTestApp();
  admin = await makeUser(t.app, { kind: 'admin' });
  analyst = await makeUser(t.app, { name: 'Tamsin Analyst' });
  reviewer = await makeUser(t.app);
  collaborator = await makeUser(t.app, { kind: 'guest', name: 'Oren Guest' });
  collaborator2 = await makeUser(t.app);
  outsider = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst, { name: 'Wrenmoor halo stars' }).id;
  await addToCampaign(t.app, analyst, campaignId, reviewer, ['reviewer']);
  await addToCampaign(t.app, analyst, campaignId, collaborator, ['collaborator']);
  await addToCampaign(t.app, analyst, campaignId, collaborator2, ['collaborator', 'reviewer']); // a member holding two roles
  const f = await makeFittedCatalogue(t.app, analyst, campaignId, { count: 30, seed: 3 });
  acceptedCount = f.accepted.length;
});
afterAll(() => t?.cleanup());

type Route = (ctx: never) => Promise<Response> | Response;

async function call(route: Route, actor: Actor | null, params: Record<string, string>, init: { url?: string; body?: unknown; method?: string; authMethod?: 'session' | 'token' } = {}) {
  const url = new URL(init.url ?? 'http://127.0.0.1/api/test');
  const request = new Request(url, init.body === undefined ? { method: init.method ?? 'GET' } : { method: init.method ?? 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(init.body) });
  const res = await route({ locals: { app: t.app, actor, authMethod: actor ? (init.authMethod ?? 'session') : null }, params, request, url } as never);
  const type = res.headers.get('content-type') ?? '';
  return { status: res.status, headers: res.headers, body: (type.includes('application/json') ? await res.json() : await res.text()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

describe('API tokens', () => {
  it('shows the secret once and stores only its SHA-256', () => {
    const { token, secret } = createApiToken(t.db, collaborator, { name: 'nightly pull' });
    expect(secret).toMatch(/^sk_[A-Za-z0-9_-]{43}$/);
    expect(token).toMatchObject({ name: 'nightly pull', prefix: secret.slice(0, 10), status: 'active', lastUsedAt: null, expiresAt: null });
    const row = t.sqlite.prepare('SELECT * FROM api_tokens WHERE id = ?').get(token.id) as Record<string, unknown>;
    expect(row.token_hash).toBe(createHash('sha256').update(secret).digest('hex'));
    expect(Object.values(row).some((v) => typeof v === 'string' && v.includes(secret.slice(10)))).toBe(false);
    expect(JSON.stringify(t.sqlite.prepare('SELECT * FROM audit_events').all())).not.toContain(secret.slice(10));
  });

  it('identifies the owner from a bearer secret, records the last use, and refuses unknown, revoked and expired tokens', () => {
    const { token, secret } = createApiToken(t.db, reviewer, { name: 'script' });
    expect(bearerSecret(new Headers({ authorization: `Bearer ${secret}` }))).toBe(secret);
    expect(bearerSecret(new Headers())).toBeNull();
    expect(bearerSecret(new Headers({ authorization: 'Basic abc' }))).toBe('');
    const found = actorFromBearer(t.db, secret);
    expect(found).toEqual({ ok: true, actor: { id: reviewer.id, name: reviewer.name, email: reviewer.email, kind: 'member' }, tokenId: token.id });
    expect(t.sqlite.prepare('SELECT last_used_at FROM api_tokens WHERE id = ?').pluck().get(token.id)).toEqual(expect.any(Number));
    expect(actorFromBearer(t.db, `${secret}x`)).toEqual({ ok: false, message: expect.stringMatching(/not known/) });
    expect(actorFromBearer(t.db, 'abc')).toEqual({ ok: false, message: expect.stringMatching(/Bearer sk_/) });
    revokeApiToken(t.db, reviewer, token.id);
    expect(actorFromBearer(t.db, secret)).toEqual({ ok: false, message: expect.stringMatching(/revoked/) });
    const short = createApiToken(t.db, reviewer, { name: 'one day', expiresInDays: 1 });
    expect(actorFromBearer(t.db, short.secret).ok).toBe(true);
    expect(actorFromBearer(t.db, short.secret, new Date(Date.now() + 2 * 86_400_000))).toEqual({ ok: false, message: expect.stringMatching(/expired/) });
  });

  it('routes: sign-in needed, tokens cannot make tokens, list without secrets, revoke only your own', async () => {
    expect((await call(createTokenRoute, null, {}, { body: { name: 'x' } })).status).toBe(401);
    expect((await call(listTokensRoute, null, {})).status).toBe(401);
    expect((await call(createTokenRoute, analyst, {}, { body: { name: 'x' }, authMethod: 'token' })).status).toBe(403);
    const bad = await call(createTokenRoute, analyst, {}, { body: { name: '  ' } });
    expect(bad.status).toBe(400);
    expect(bad.body.error.field).toBe('name');
    const made = await call(createTokenRoute, analyst, {}, { body: { name: 'pipeline', expiresInDays: 30 } });
    expect(made.status).toBe(201);
    expect(made.body.secret).toMatch(/^sk_/);
    const list = await call(listTokensRoute, analyst, {});
    expect(list.body.tokens.map((x: { name: string }) => x.name)).toEqual(['pipeline']);
    expect(JSON.stringify(list.body)).not.toContain(made.body.secret.slice(10));
    expect((await call(revokeTokenRoute, collaborator, { tokenId: made.body.token.id }, { method: 'DELETE' })).status).toBe(404);
    const revoked = await call(revokeTokenRoute, analyst, { tokenId: made.body.token.id }, { method: 'DELETE' });
    expect(revoked.status).toBe(200);
    expect(revoked.body.token.status).toBe('revoked');
    expect(actorFromBearer(t.db, made.body.secret).ok).toBe(false);
  });

  it('a token acts with its owner’s roles: a collaborator’s token reads and downloads but cannot release', async () => {
    const c = createApiToken(t.db, collaborator, { name: 'read' });
    const a = createApiToken(t.db, analyst, { name: 'release' });
    const asCollaborator = actorFromBearer(t.db, c.secret);
    const asAnalyst = actorFromBearer(t.db, a.secret);
    if (!asCollaborator.ok || !asAnalyst.ok) throw new Error('tokens not accepted');
    const params = { id: campaignId };
    const url = `http://127.0.0.1/api/campaigns/${campaignId}/catalogue?status=accepted&limit=500`;
    const page = await call(catalogueRoute, asCollaborator.actor, params, { url, authMethod: 'token' });
    expect(page.status).toBe(200);
    expect(page.body.rows).toHaveLength(acceptedCount);
    const csv = await call(downloadRoute, asCollaborator.actor, { id: campaignId, format: 'csv' }, { url: `http://127.0.0.1/api/campaigns/${campaignId}/downloads/csv?status=accepted`, authMethod: 'token' });
    expect(csv.status).toBe(200);
    expect(String(csv.body).split('\n').filter((l) => l && !l.startsWith('#'))).toHaveLength(acceptedCount + 1);
    expect((await call(releaseRoute, asCollaborator.actor, params, { body: { title: 'Not mine to give' }, authMethod: 'token' })).status).toBe(403);
    const release = await call(releaseRoute, asAnalyst.actor, params, { body: { title: 'Scripted release' }, authMethod: 'token' });
    expect(release.status).toBe(201);
  });
});

describe('who may call the catalogue endpoints', () => {
  const readRoutes: [string, Route, (id: string) => Record<string, string>][] = [
    ['catalogue', catalogueRoute, (id) => ({ id })],
    ['catalogue/count', countRoute, (id) => ({ id })],
    ['catalogue/diagrams', diagramsRoute, (id) => ({ id })],
    ['downloads/csv', downloadRoute, (id) => ({ id, format: 'csv' })],
    ['downloads/votable', downloadRoute, (id) => ({ id, format: 'votable' })],
    ['downloads/fits', downloadRoute, (id) => ({ id, format: 'fits' })],
    ['downloads/json', downloadRoute, (id) => ({ id, format: 'json' })],
    ['releases', listReleasesRoute, (id) => ({ id })],
  ];

  it('reads: anonymous 401, outsider 404 (as for a missing campaign), every member and an admin 200', async () => {
    for (const [name, route, params] of readRoutes) {
      const url = `http://127.0.0.1/api/campaigns/${campaignId}/${name}?status=accepted`;
      expect((await call(route, null, params(campaignId), { url })).status, `${name} anonymous`).toBe(401);
      expect((await call(route, outsider, params(campaignId), { url })).status, `${name} outsider`).toBe(404);
      for (const who of [collaborator, reviewer, analyst, admin]) expect((await call(route, who, params(campaignId), { url })).status, `${name} ${who.email}`).toBe(200);
      expect((await call(route, collaborator, params('nosuchcampaign'), { url })).status, `${name} unknown campaign`).toBe(404);
    }
  });

  it('releases: only the campaign’s analysts and admins; every collaborator gets one e-mail per release', async () => {
    const params = { id: campaignId };
    const body = { title: 'First light', note: 'Accepted fits of the halo field.' };
    expect((await call(releaseRoute, null, params, { body })).status).toBe(401);
    expect((await call(releaseRoute, outsider, params, { body })).status).toBe(404);
    expect((await call(releaseRoute, collaborator, params, { body })).status).toBe(403);
    expect((await call(releaseRoute, reviewer, params, { body })).status).toBe(403);
    const outbox = () => t.sqlite.prepare("SELECT to_address, subject, text_body FROM outbox_messages WHERE subject LIKE 'Catalogue released:%' ORDER BY id").all() as { to_address: string; subject: string; text_body: string }[];
    const before = outbox().length;
    const made = await call(releaseRoute, analyst, params, { body });
    expect(made.status).toBe(201);
    expect(made.body.release).toMatchObject({ title: 'First light', rowCount: acceptedCount, query: 'status=accepted', notified: 2, releasedBy: { id: analyst.id, name: analyst.name } });
    const mails = outbox().slice(before);
    expect(mails.map((m) => m.to_address).sort()).toEqual([collaborator.email, collaborator2.email].sort());
    expect(mails[0].subject).toBe('Catalogue released: First light (Wrenmoor halo stars)');
    expect(mails[0].text_body).toContain(`${acceptedCount} stars`);
    // The e-mail links the release's own page, the address to cite.
    expect(mails[0].text_body).toContain(`/campaigns/${campaignId}/releases/${made.body.release.id}`);
    // An admin who is not a member may release too; again one e-mail per collaborator.
    expect((await call(releaseRoute, admin, params, { body: { title: 'Second look', query: 'status=accepted,flagged' } })).status).toBe(201);
    expect(outbox().length - before).toBe(4);
    const list = await call(listReleasesRoute, collaborator, params);
    expect(list.body.releases.map((r: { title: string }) => r.title).slice(0, 2)).toEqual(['Second look', 'First light']);
    // Nothing to release: refused, nothing recorded, nobody told.
    const empty = await call(releaseRoute, analyst, params, { body: { title: 'Empty', query: 'teffMin=1000000' } });
    expect(empty.status).toBe(409);
    expect(outbox().length - before).toBe(4);
    expect((await call(releaseRoute, analyst, params, { body: { title: 'x' } })).status).toBe(400);
  });
});

describe('OpenAPI description', () => {
  function routeFiles(dir: string): string[] {
    return readdirSync(dir).flatMap((f) => {
      const p = path.join(dir, f);
      return statSync(p).isDirectory() ? routeFiles(p) : p.endsWith('.ts') && !p.endsWith('.test.ts') ? [p] : [];
    });
  }

  it('is OpenAPI 3.1 with bearer security and describes every public route file and method', async () => {
    const res = await call(openapiRoute, null, {});
    expect(res.status).toBe(200);
    const doc = res.body as { openapi: string; paths: Record<string, Record<string, unknown>>; components: { securitySchemes: Record<string, { type: string; scheme?: string }> } };
    expect(doc.openapi).toBe('3.1.0');
    expect(doc.components.securitySchemes.bearerToken).toMatchObject({ type: 'http', scheme: 'bearer' });
    const apiDir = path.join(projectRoot(), 'src/pages/api');
    const { readFileSync } = await import('node:fs');
    const missing: string[] = [];
    for (const file of routeFiles(apiDir)) {
      const rel = path.relative(apiDir, file).replace(/\\/g, '/');
      // better-auth's own endpoints and the JSON 404 catch-all are not part of the public API.
      if (rel.startsWith('auth/') || rel === '[...rest].ts') continue;
      const route = `/api/${rel.replace(/\.ts$/, '').replace(/\/index$/, '').replace(/\[([^\]]+)\]/g, '{$1}')}`;
      const methods = [...readFileSync(file, 'utf8').matchAll(/export const (GET|POST|PUT|PATCH|DELETE)\b/g)].map((m) => m[1].toLowerCase());
      for (const m of methods) if (!doc.paths[route]?.[m]) missing.push(`${m.toUpperCase()} ${route}`);
    }
    expect(missing).toEqual([]);
  });
});
