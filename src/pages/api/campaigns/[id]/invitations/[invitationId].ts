// DELETE /api/campaigns/:id/invitations/:invitationId: revoke an open invitation (its link stops
// working). The campaign's analysts and admins. Open invitations are listed in GET /api/campaigns/:id.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { revokeInvitation } from '#server/members';

export const DELETE: APIRoute = handle(({ locals, params }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  revokeInvitation(locals.app.db, actor, campaign.id, params.invitationId ?? '');
  return json({ revoked: true });
});
