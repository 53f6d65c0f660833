// GET /api/campaigns/:id: the campaign with its members (members of the campaign and admins).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { getCampaignOverview } from '#server/campaigns';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json(getCampaignOverview(locals.app.db, actor, campaign.id));
});
