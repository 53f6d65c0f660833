// POST /api/campaigns/:id/uploads/:uploadId/import {mapping, rules, source?, importValidRows, image?}:
// imports in one transaction; 422 with the report when there are problems and importValidRows is false.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '../../../../../../lib/guards';
import { json, readJsonBody } from '../../../../../../lib/http';
import { handleIntake } from '../../../../../../server/intake/errors';
import { importUpload } from '../../../../../../server/intake/intake';

export const POST: APIRoute = handleIntake(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  return json({ import: importUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body) });
});
