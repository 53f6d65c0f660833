// POST /api/fits/:fitId/decision {decision: accepted|flagged, reason?, comment?}: decide on one fit
// (reviewers of its campaign and admins). The fit's earlier decision is kept, marked superseded.
// The four-eyes rule refuses an accept by the person who started the fit's batch (403).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { decide, requireFitRef } from '#server/review';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const fit = requireFitRef(locals.app.db, params.fitId);
  const { actor } = requireCampaignRole(locals, fit.campaignId, ['reviewer'], { allowAdmin: true });
  const body = await readJsonBody(request);
  return json({ decision: decide(locals.app.db, actor, fit.id, body) }, 201);
});
