// POST /api/admin/people/:userId/kind {kind}: make an account admin, member or guest (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { setKind } from '#server/people';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const actor = requireAdmin(locals);
  return json({ person: setKind(locals.app.db, actor, params.userId ?? '', await readJsonBody(request)) });
});
