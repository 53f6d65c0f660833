// GET /api/campaigns/:id/releases/:releaseId/compare/:otherId — stars added, removed and changed
// from this release to the other (any member or admin).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { compareReleases } from '#server/releases';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ comparison: compareReleases(locals.app.db, campaign.id, params.releaseId ?? '', params.otherId ?? '') });
});
