// GET /api/admin/users: every account with its kind (admins only).
import type { APIRoute } from 'astro';
import { requireAdmin } from '../../../web/guards';
import { handle, json } from '../../../web/http';
import { listUsers } from '../../../server/admin';

export const GET: APIRoute = handle(({ locals }) => {
  requireAdmin(locals);
  return json({ users: listUsers(locals.app.db) });
});
