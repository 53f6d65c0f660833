// GET /api/admin/people?q=&limit=&offset=: accounts with kind, campaign roles, sessions and tokens (admins).
// POST {campaignId, email, roles}: invite someone to a campaign by e-mail (through the outbox), or
// add an existing account to it (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { invitePerson, listPeople } from '#server/people';

export const GET: APIRoute = handle(({ locals, url }) => {
  requireAdmin(locals);
  const num = (name: string) => {
    const v = url.searchParams.get(name);
    return v === null || !/^\d+$/.test(v) ? undefined : Number(v);
  };
  return json(listPeople(locals.app.db, { q: url.searchParams.get('q') ?? undefined, limit: num('limit'), offset: num('offset') }));
});

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const actor = requireAdmin(locals);
  const result = await invitePerson(locals.app, actor, await readJsonBody(request));
  return json(result, 201);
});
