// POST /api/admin/bands/:key/zero-point {zeroPoint, reason}: a new zero-point or source for a band —
// a new band library version; fits that used the old numbers become stale (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '../../../../../lib/guards';
import { handle, json, readJsonBody } from '../../../../../lib/http';
import { summariseBand, updateZeroPoint } from '../../../../../server/band-library';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const actor = requireAdmin(locals);
  const body = (await readJsonBody(request)) as { zeroPoint?: unknown; reason?: unknown } | null;
  const { version, band } = updateZeroPoint(locals.app.db, actor, params.key ?? '', body?.zeroPoint, body?.reason);
  return json({ version, band: summariseBand(band) }, 201);
});
