// GET /api/batches/:batchId/progress: counts, rate and time left of one batch (any member of its
// campaign, admins). The batch page polls this.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { batchProgress, requireBatch } from '#server/batches';

export const GET: APIRoute = handle(({ locals, params }) => {
  const batch = requireBatch(locals.app.db, params.batchId ?? '');
  requireCampaignRole(locals, batch.campaignId, 'any', { allowAdmin: true });
  return json({ progress: batchProgress(locals.app.db, batch.id) });
});
