// GET /api/batches/:batchId/failures?limit=&offset=: stars that could not be fitted, each with its
// reason, and jobs waiting to be tried again (any member of the batch's campaign, admins).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { batchFailures, requireBatch } from '#server/batches';
import { HttpError } from '#server/errors';

function pageNumber(url: URL, name: string, fallback: number): number {
  const raw = url.searchParams.get(name);
  if (raw === null || raw === '') return fallback;
  const n = Number(raw);
  if (!Number.isInteger(n) || n < 0) throw new HttpError('validation_failed', `${name} must be a whole number ≥ 0.`, name);
  return n;
}

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const batch = requireBatch(locals.app.db, params.batchId ?? '');
  requireCampaignRole(locals, batch.campaignId, 'any', { allowAdmin: true });
  const limit = pageNumber(url, 'limit', 100);
  const offset = pageNumber(url, 'offset', 0);
  return json({ ...batchFailures(locals.app.db, batch.id, { limit, offset }), limit, offset });
});
