// GET /api/campaigns/:id/batches: the campaign's batches with their progress (any member, admins).
// POST {options, starKeys?}: start a batch over the campaign's stars, or the listed ones (analysts).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { listBatches, startBatch } from '#server/batches';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ batches: listBatches(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  const batch = startBatch(locals.app, actor, campaign.id, body);
  return json({ batch }, 201);
});
