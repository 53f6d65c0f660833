// GET /api/campaigns/:id/members: members (any member or admin).
// POST {email, roles}: add a member or invite an unknown address (the campaign's analysts and admins).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { addMember, listMembers } from '#server/campaigns';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ members: listMembers(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  const body = await readJsonBody(request);
  const result = await addMember(locals.app, actor, campaign.id, body);
  return json(result, 201);
});
