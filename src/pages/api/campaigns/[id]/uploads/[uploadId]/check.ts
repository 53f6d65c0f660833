// POST /api/campaigns/:id/uploads/:uploadId/check {mapping, rules}: the validation report; writes no stars.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { checkUpload } from '#server/intake/intake';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  return json({ check: checkUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body) });
});
