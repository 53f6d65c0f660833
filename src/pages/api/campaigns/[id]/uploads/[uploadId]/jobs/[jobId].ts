// GET /api/campaigns/:id/uploads/:uploadId/jobs/:jobId: an intake job (reading, check or import):
// its state, rows read so far and, when finished, the summary or the refusal with its report.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { getIntakeJob } from '#server/intake/intake';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ job: getIntakeJob(locals.app.db, campaign.id, params.uploadId ?? '', params.jobId ?? '') });
});
