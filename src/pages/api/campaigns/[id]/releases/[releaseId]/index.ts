// GET /api/campaigns/:id/releases/:releaseId — one release: what it holds, its provenance, its
// files with their SHA-256 (any member or admin).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { getRelease } from '#server/releases';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  return json({ release: getRelease(locals.app.db, campaign.id, params.releaseId ?? '') });
});
