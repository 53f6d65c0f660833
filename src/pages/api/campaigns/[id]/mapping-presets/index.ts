// GET /api/campaigns/:id/mapping-presets: saved column mappings. POST {name, mapping, rules}: save
// (the same name replaces). Analysts only; admins may look.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { listPresets, savePreset } from '#server/intake/presets';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ presets: listPresets(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  const body = await readJsonBody(request);
  const { preset, replaced } = savePreset(locals.app.db, actor, campaign.id, body);
  return json({ preset, replaced }, replaced ? 200 : 201);
});
