// GET /api/admin/bands/:key?version=: one band with its curve (current version unless one is
// named) and the versions in which it changed (any signed-in person).
import type { APIRoute } from 'astro';
import { requireUser } from '#web/guards';
import { handle, json } from '#web/http';
import { getCurrentVersion, getLibrary, listHistory } from '#server/band-library';
import { HttpError } from '#server/errors';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  requireUser(locals);
  const db = locals.app.db;
  const versionLabel = url.searchParams.get('version') ?? getCurrentVersion(db).label;
  const library = getLibrary(db, versionLabel);
  const key = params.key ?? '';
  const band = Object.prototype.hasOwnProperty.call(library.bands, key) ? library.bands[key] : null;
  if (!band) throw new HttpError('not_found', `There is no band "${key}" in band library ${versionLabel}.`);
  return json({ version: versionLabel, band, history: listHistory(db, key) });
});
