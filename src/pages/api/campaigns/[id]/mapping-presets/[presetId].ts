// DELETE /api/campaigns/:id/mapping-presets/:presetId (analysts only).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { deletePreset } from '#server/intake/presets';

export const DELETE: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  deletePreset(locals.app.db, campaign.id, params.presetId ?? '');
  return json({ deleted: true });
});
