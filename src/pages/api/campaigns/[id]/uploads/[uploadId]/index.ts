// GET /api/campaigns/:id/uploads/:uploadId: the upload with its columns, preview, detected mapping and report.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { getUpload } from '#server/intake/intake';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ upload: getUpload(locals.app.db, campaign.id, params.uploadId ?? '') });
});
