// POST /api/campaigns/:id/uploads/:uploadId/check {mapping, rules}: queues the check of every row
// (writes no stars) and answers 202 with its job; GET …/jobs/:jobId says how far it is and, when
// done, gives the validation report. A check with the mapping already checked answers at once.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { checkUpload } from '#server/intake/intake';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  const job = checkUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body);
  return json({ job }, 202, { location: `/api/campaigns/${campaign.id}/uploads/${job.uploadId}/jobs/${job.id}` });
});
