// GET /api/admin/bands/versions?limit=&offset=: band library versions, newest first (any signed-in person).
import type { APIRoute } from 'astro';
import { requireUser } from '#web/guards';
import { handle, json } from '#web/http';
import { listVersions } from '#server/band-library';

export const GET: APIRoute = handle(({ locals, url }) => {
  requireUser(locals);
  const num = (name: string) => {
    const v = url.searchParams.get(name);
    return v === null || !/^\d+$/.test(v) ? undefined : Number(v);
  };
  return json(listVersions(locals.app.db, { limit: num('limit'), offset: num('offset') }));
});
