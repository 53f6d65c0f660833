// POST /api/campaigns/:id/uploads/:uploadId/import {mapping, rules, source?, importValidRows, image?}:
// queues the import (one transaction) and answers 202 with its job. The job ends done with the
// counts, or failed with the refusal (422 and the report when there are problems and
// importValidRows is false) — GET …/jobs/:jobId.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { importUpload } from '#server/intake/intake';
import { assertNotArchived } from '#server/members';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  assertNotArchived(locals.app.db, campaign.id);
  const body = await readJsonBody(request);
  const job = importUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body);
  return json({ job }, 202, { location: `/api/campaigns/${campaign.id}/uploads/${job.uploadId}/jobs/${job.id}` });
});
