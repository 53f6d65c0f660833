// POST /api/campaigns/:id/archive {archived: true|false}: archive or restore the campaign (the
// campaign's analysts and admins). Archived campaigns keep everything and take no imports or batches.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { setArchived } from '#server/members';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json(setArchived(locals.app.db, actor, campaign.id, await readJsonBody(request)));
});
