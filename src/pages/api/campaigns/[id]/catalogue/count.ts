// GET /api/campaigns/:id/catalogue/count: how many results the filter leaves, and the campaign's
// total (any member or admin). Same filter parameters as …/catalogue.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { catalogueCount } from '#server/catalogue';
import { parseCatalogueFilter } from '#web/catalogue-params';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json(catalogueCount(locals.app.db, campaign.id, parseCatalogueFilter(url.searchParams)));
});
