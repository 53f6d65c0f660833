// GET /api/campaigns: the signed-in person's campaigns. POST: create one (members and admins).
import type { APIRoute } from 'astro';
import { requireUser } from '../../../web/guards';
import { handle, json, readJsonBody } from '../../../web/http';
import { createCampaign, listCampaignsForUser } from '../../../server/campaigns';

export const GET: APIRoute = handle(({ locals }) => {
  const actor = requireUser(locals);
  return json({ campaigns: listCampaignsForUser(locals.app.db, actor.id, { admin: actor.kind === 'admin' }) });
});

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const actor = requireUser(locals);
  const body = await readJsonBody(request);
  const campaign = createCampaign(locals.app.db, actor, body);
  return json({ campaign }, 201, { location: `/api/campaigns/${campaign.id}` });
});
