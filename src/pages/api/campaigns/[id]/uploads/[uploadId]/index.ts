// GET /api/campaigns/:id/uploads/:uploadId: the upload with its columns, preview, detected mapping and report.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { getUpload } from '#server/intake/intake';
import { withdrawUpload } from '#server/intake/withdraw';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ upload: getUpload(locals.app.db, campaign.id, params.uploadId ?? '') });
});

// DELETE: withdraw the upload with everything its import brought in, in one transaction (analysts, admins).
export const DELETE: APIRoute = handle(({ locals, params }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ withdrawn: withdrawUpload(locals.app.db, actor, campaign.id, params.uploadId ?? '') });
});
