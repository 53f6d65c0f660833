// GET /api/campaigns/:id/catalogue/diagrams: the temperature–luminosity diagram (points, or a 2-D
// histogram when there are more than DIAGRAM_POINT_LIMIT) and the temperature histogram for the
// filter (any member or admin). Same filter parameters as …/catalogue.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { catalogueDiagrams } from '#server/catalogue';
import { parseCatalogueFilter } from '#web/catalogue-params';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json(catalogueDiagrams(locals.app.db, campaign.id, parseCatalogueFilter(url.searchParams)));
});
