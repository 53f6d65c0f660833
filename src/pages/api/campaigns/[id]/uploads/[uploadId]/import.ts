// POST /api/campaigns/:id/uploads/:uploadId/import {mapping, rules, source?, importValidRows, image?}:
// imports in one transaction; 422 with the report when there are problems and importValidRows is false.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { importUpload } from '#server/intake/intake';
import { assertNotArchived } from '#server/members';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  assertNotArchived(locals.app.db, campaign.id);
  const body = await readJsonBody(request);
  return json({ import: importUpload(locals.app, actor, campaign.id, params.uploadId ?? '', body) });
});
