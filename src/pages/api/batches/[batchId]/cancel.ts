// POST /api/batches/:batchId/cancel: stop a waiting or running batch — its waiting jobs are
// removed, jobs a worker holds finish (src/server/batches.ts cancelBatch). Analysts of its
// campaign and admins; 409 when it has finished or was cancelled already.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { cancelBatch, requireBatch } from '#server/batches';

export const POST: APIRoute = handle(({ locals, params }) => {
  const batch = requireBatch(locals.app.db, params.batchId ?? '');
  const { actor } = requireCampaignRole(locals, batch.campaignId, ['analyst'], { allowAdmin: true });
  return json(cancelBatch(locals.app, actor, batch.id));
});
