// GET /api/campaigns/:id/review/settings: the campaign's review rules (any member, admins).
// POST {fourEyes, reason}: switch the four-eyes rule on or off — analysts and reviewers of the
// campaign and admins; never a guest account, nor (to switch it off) whoever started a batch whose
// fits wait for review; switching off needs a reason. Audited.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { getReviewSettings, setReviewSettings } from '#server/review';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ settings: getReviewSettings(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign, roles } = requireCampaignRole(locals, params.id ?? '', ['analyst', 'reviewer'], { allowAdmin: true });
  const body = await readJsonBody(request);
  return json({ settings: setReviewSettings(locals.app.db, actor, campaign.id, body, roles) });
});
