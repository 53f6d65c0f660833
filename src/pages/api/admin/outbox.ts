// GET /api/admin/outbox?to=&limit=&offset=: e-mails the service has composed (admins only).
import type { APIRoute } from 'astro';
import { requireAdmin } from '../../../web/guards';
import { handle, json } from '../../../web/http';
import { listOutbox } from '../../../server/admin';

export const GET: APIRoute = handle(({ locals, url }) => {
  requireAdmin(locals);
  const num = (name: string) => {
    const v = url.searchParams.get(name);
    return v === null || !/^\d+$/.test(v) ? undefined : Number(v);
  };
  return json(listOutbox(locals.app.db, { to: url.searchParams.get('to') ?? undefined, limit: num('limit'), offset: num('offset') }));
});
