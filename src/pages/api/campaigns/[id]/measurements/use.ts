// POST /api/campaigns/:id/measurements/use {measurementIds | uploadId, use, reason}: set values
// aside (kept, not used in fits from then on; a reason is required) or use them again (the
// campaign's analysts and admins). Audited; fits already made keep what they used.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { setMeasurementUse } from '#server/measurement-use';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json(setMeasurementUse(locals.app.db, actor, campaign.id, await readJsonBody(request)));
});
