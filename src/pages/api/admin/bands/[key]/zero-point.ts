// POST /api/admin/bands/:key/zero-point {zeroPoint, reason}: a new zero-point or source for a band —
// a new band library version; fits that used the old numbers become stale and the analysts of their
// campaigns get an e-mail (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { summariseBand, updateZeroPoint } from '#server/band-library';
import { notifyAnalystsOfStaleFits } from '#server/stale';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const actor = requireAdmin(locals);
  const body = (await readJsonBody(request)) as { zeroPoint?: unknown; reason?: unknown } | null;
  const { version, band } = updateZeroPoint(locals.app.db, actor, params.key ?? '', body?.zeroPoint, body?.reason);
  // Analysts hear when their fits went stale (not for a change of wording only).
  const notified = version.change.numbersChanged ? await notifyAnalystsOfStaleFits(locals.app, band.key, version.label, version.reason) : 0;
  return json({ version, band: summariseBand(band), notified }, 201);
});
