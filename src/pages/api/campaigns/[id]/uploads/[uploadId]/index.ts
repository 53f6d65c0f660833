// GET /api/campaigns/:id/uploads/:uploadId: the upload with its columns, preview, detected mapping and report.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '../../../../../../lib/guards';
import { json } from '../../../../../../lib/http';
import { handleIntake } from '../../../../../../server/intake/errors';
import { getUpload } from '../../../../../../server/intake/intake';

export const GET: APIRoute = handleIntake(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ upload: getUpload(locals.app.db, campaign.id, params.uploadId ?? '') });
});
