// POST /api/admin/people/:userId/deactivate {reason}: end the person's sessions, stop their API
// tokens and refuse sign-in until reactivated (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { deactivatePerson } from '#server/people';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const actor = requireAdmin(locals);
  return json({ person: deactivatePerson(locals.app.db, actor, params.userId ?? '', await readJsonBody(request)) });
});
