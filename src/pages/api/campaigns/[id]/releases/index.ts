// GET /api/campaigns/:id/releases: the campaign's catalogue releases (any member or admin).
// POST {title, note?, query?}: release the catalogue (default query status=accepted) and e-mail every
// collaborator once through the outbox (the campaign's analysts and admins).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { createRelease, listReleases } from '#server/releases';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ releases: listReleases(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  const body = await readJsonBody(request);
  return json({ release: await createRelease(locals.app, actor, { id: campaign.id, name: campaign.name }, body) }, 201);
});
