// GET /api/campaigns/:id/catalogue: one page of the campaign's results (any member or admin).
// Query: sort (teff_k, lum_lsun, radius_rsun, chi2_red, star_key, review_status), dir (asc|desc),
// limit (1–500), after / before (cursors from a previous page), and the filter: status
// (pending,accepted,flagged comma-separated, or all), teffMin, teffMax, chi2Max, flag, flagAbsent, q
// (star id prefix). Totals are a separate request (…/catalogue/count): they read every matching row.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { cataloguePage } from '#server/catalogue';
import { parseCataloguePageRequest } from '#web/catalogue-params';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  const req = parseCataloguePageRequest(url.searchParams);
  return json(cataloguePage(locals.app.db, campaign.id, req));
});
