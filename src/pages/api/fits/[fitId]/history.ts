// GET /api/fits/:fitId/history: every review decision on one fit, newest first, superseded ones
// included with when and why (any member of its campaign, admins).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { fitHistory, requireFitRef } from '#server/review';

export const GET: APIRoute = handle(({ locals, params }) => {
  const fit = requireFitRef(locals.app.db, params.fitId);
  requireCampaignRole(locals, fit.campaignId, 'any', { allowAdmin: true });
  return json({ fit: { id: fit.id, starId: fit.starId, starKey: fit.starKey, batchId: fit.batchId, reviewStatus: fit.reviewStatus }, history: fitHistory(locals.app.db, fit.id) });
});
