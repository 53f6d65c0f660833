// GET /api/campaigns/:id/downloads/:format — the catalogue as csv, votable, fits or json, streamed
// (any member or admin, by session or API token). Same filter parameters as …/catalogue; without
// status every review state is included, so ask for status=accepted for the accepted catalogue.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle } from '#web/http';
import { parseCatalogueFilter } from '#web/catalogue-params';
import { HttpError } from '#server/errors';
import { EXPORT_FORMAT_NAMES, exportResponse, isExportFormat } from '#server/exports';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  const format = params.format ?? '';
  if (!isExportFormat(format)) throw new HttpError('not_found', `No download format "${format}"; choose one of ${EXPORT_FORMAT_NAMES.join(', ')}.`);
  const filter = parseCatalogueFilter(url.searchParams);
  return exportResponse(locals.app.db, { id: campaign.id, name: campaign.name }, filter, format);
});
