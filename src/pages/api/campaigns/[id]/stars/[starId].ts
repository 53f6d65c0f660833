// GET /api/campaigns/:id/stars/:starId: one star's sheet as JSON — measurements with their uploads,
// the newest fit with every band's observed and model flux and residual, the fitted curve sampled
// for plotting, earlier fits and the review history (any member of the campaign, admins).
// :starId is the numeric id or the star's key in the campaign.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { starSheet } from '#server/star-sheet';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json(starSheet(locals.app.db, campaign.id, params.starId ?? ''));
});
