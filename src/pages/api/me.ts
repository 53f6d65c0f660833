// GET /api/me: the signed-in person (401 when anonymous).
import type { APIRoute } from 'astro';
import { requireUser } from '../../web/guards';
import { handle, json } from '../../web/http';

export const GET: APIRoute = handle(({ locals }) => json({ user: requireUser(locals) }));
