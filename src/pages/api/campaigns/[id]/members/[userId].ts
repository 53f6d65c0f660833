// PUT /api/campaigns/:id/members/:userId {roles}: replace a member's roles. DELETE: remove the
// member. The campaign's analysts and admins; the last analyst keeps the role and cannot be removed.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { removeMember, setMemberRoles } from '#server/members';

export const PUT: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  const body = await readJsonBody(request);
  return json({ member: setMemberRoles(locals.app.db, actor, campaign.id, params.userId ?? '', body) });
});

export const DELETE: APIRoute = handle(({ locals, params }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  removeMember(locals.app.db, actor, campaign.id, params.userId ?? '');
  return json({ removed: true });
});
