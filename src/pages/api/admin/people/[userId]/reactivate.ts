// POST /api/admin/people/:userId/reactivate: let a deactivated person sign in again (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json } from '#web/http';
import { reactivatePerson } from '#server/people';

export const POST: APIRoute = handle(({ locals, params }) => {
  const actor = requireAdmin(locals);
  return json({ person: reactivatePerson(locals.app.db, actor, params.userId ?? '') });
});
