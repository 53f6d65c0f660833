// GET /api/campaigns/:id/stars?q=&after=&before=&limit=: the campaign's stars in order of their id,
// keyset-paged (pass nextAfter / prevBefore back), each with its measurement count and current
// fit — any member of the campaign, admins. The page /campaigns/:id/stars shows the same.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { listStars, parseStarListRequest } from '#server/stars';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json(listStars(locals.app.db, campaign.id, parseStarListRequest(url.searchParams)));
});
