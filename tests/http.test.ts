// JSON handling and guards, as API routes use them.
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { z } from 'zod';
import { handle, readJson } from '../src/web/http';
import { requireAdmin, requireCampaignRole, requireUser } from '../src/web/guards';
import { HttpError } from '../src/server/errors';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

const schema = z.object({ name: z.string().min(1, 'Enter a name.') });
const post = (body: string, type = 'application/json') => new Request('http://x/api', { method: 'POST', headers: { 'content-type': type }, body });

describe('readJson', () => {
  it('reads a valid body', async () => {
    expect(await readJson(post('{"name":"Vega"}'), schema)).toEqual({ name: 'Vega' });
  });

  it.each([
    ['{"name":', 'invalid_json', /not valid JSON/],
    ['', 'invalid_json', /not valid JSON/],
    ['{"name":""}', 'validation_failed', /Enter a name/],
    ['[1,2]', 'validation_failed', /object/],
  ])('turns %j into a 400 with a clear message', async (body, code, message) => {
    const err = await readJson(post(body), schema).catch((e) => e);
    expect(err).toBeInstanceOf(HttpError);
    expect(err.status).toBe(400);
    expect(err.code).toBe(code);
    expect(err.message).toMatch(message);
  });

  it('asks for JSON when the content type is something else', async () => {
    const err = await readJson(post('name=Vega', 'application/x-www-form-urlencoded'), schema).catch((e) => e);
    expect(err.status).toBe(400);
    expect(err.message).toMatch(/Content-Type: application\/json/);
  });

  it('handle() turns thrown errors into the JSON error shape', async () => {
    const route = handle(async () => {
      throw new HttpError('conflict', 'Taken.', 'name');
    });
    const res = await route({});
    expect(res.status).toBe(409);
    expect(await res.json()).toEqual({ error: { code: 'conflict', message: 'Taken.', field: 'name' } });
  });
});

describe('guards', () => {
  let t: TestApp;
  beforeEach(() => {
    t = createTestApp();
  });
  afterEach(() => t.cleanup());

  it('require a user, an admin, or a role in the campaign', async () => {
    const analyst = await makeUser(t.app);
    const outsider = await makeUser(t.app);
    const admin = await makeUser(t.app, { kind: 'admin' });
    const c = makeCampaign(t.app, analyst);
    const as = (actor: typeof analyst | null) => ({ app: t.app, actor });
    const status = (fn: () => unknown) => {
      try {
        fn();
        return 200;
      } catch (e) {
        return (e as HttpError).status;
      }
    };
    expect(status(() => requireUser(as(null)))).toBe(401);
    expect(status(() => requireAdmin(as(analyst)))).toBe(403);
    expect(status(() => requireAdmin(as(admin)))).toBe(200);
    expect(status(() => requireCampaignRole(as(analyst), c.id, ['analyst']))).toBe(200);
    expect(status(() => requireCampaignRole(as(analyst), c.id, ['reviewer']))).toBe(403);
    // A non-member hears the same 404 for an existing campaign as for a missing one (issue 10, item 7).
    expect(status(() => requireCampaignRole(as(outsider), c.id, 'any'))).toBe(404);
    expect(status(() => requireCampaignRole(as(outsider), 'missing', 'any'))).toBe(404);
    expect(status(() => requireCampaignRole(as(null), c.id, 'any'))).toBe(401);
    expect(status(() => requireCampaignRole(as(admin), c.id, 'any'))).toBe(403);
    expect(status(() => requireCampaignRole(as(admin), c.id, 'any', { allowAdmin: true }))).toBe(200);
    expect(status(() => requireCampaignRole(as(analyst), 'missing', 'any'))).toBe(404);
  });
});
