// GET /api/admin/bands: the current band library (any signed-in person may read it; analysts need it).
// POST {band, curve, reason}: add a band from an uploaded curve — a new band library version (admins).
import type { APIRoute } from 'astro';
import { requireAdmin, requireUser } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { createBand, getCurrentLibrary, getCurrentVersion, summariseBand } from '#server/band-library';

export const GET: APIRoute = handle(({ locals }) => {
  requireUser(locals);
  const version = getCurrentVersion(locals.app.db);
  const library = getCurrentLibrary(locals.app.db);
  return json({ version, bands: Object.values(library.bands).map(summariseBand) });
});

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const actor = requireAdmin(locals);
  const body = (await readJsonBody(request)) as { band?: unknown; curve?: unknown; reason?: unknown } | null;
  const { version, band } = createBand(locals.app.db, actor, { band: body?.band, curve: body?.curve, reason: body?.reason });
  return json({ version, band: summariseBand(band) }, 201);
});
