// GET /api/admin/audit?scope=admin|all&action=&actor=&before=&limit=: the audit log, newest first,
// keyset-paged on the server (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '../../../web/guards';
import { handle, json } from '../../../web/http';
import { auditLog } from '../../../server/people';

export const GET: APIRoute = handle(({ locals, url }) => {
  requireAdmin(locals);
  const num = (name: string) => {
    const v = url.searchParams.get(name);
    return v === null || !/^\d+$/.test(v) ? undefined : Number(v);
  };
  return json(
    auditLog(locals.app.db, {
      scope: url.searchParams.get('scope') === 'all' ? 'all' : 'admin',
      action: url.searchParams.get('action') || undefined,
      actorId: url.searchParams.get('actor') || undefined,
      before: num('before'),
      limit: num('limit'),
    }),
  );
});
