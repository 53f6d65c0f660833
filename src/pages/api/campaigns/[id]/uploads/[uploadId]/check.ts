// POST /api/campaigns/:id/uploads/:uploadId/check {mapping, rules}: the validation report; writes no stars.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '../../../../../../lib/guards';
import { json, readJsonBody } from '../../../../../../lib/http';
import { handleIntake } from '../../../../../../server/intake/errors';
import { checkUpload } from '../../../../../../server/intake/intake';

export const POST: APIRoute = handleIntake(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  return json({ check: checkUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body) });
});
