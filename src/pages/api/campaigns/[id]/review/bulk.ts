// POST /api/campaigns/:id/review/bulk {filter, decision, reason?, comment?}: one decision on every
// pending fit matching the filter, in one transaction, each decision recording the filter
// (reviewers of the campaign and admins). Under the four-eyes rule an accept leaves out fits of
// batches the caller started and says how many.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { bulkDecide } from '#server/review';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['reviewer'], { allowAdmin: true });
  const body = await readJsonBody(request);
  return json(bulkDecide(locals.app.db, actor, campaign.id, body));
});
