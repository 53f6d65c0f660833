// GET /api/campaigns/:id/refit-stale?limit=&offset=: the campaign's current fits that are stale
// (a band they used changed in the current band library version) — any member, admins.
// POST: re-fit those stars on the current version with their earlier batch's options (analysts).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { refitPreview, refitStaleStars, staleFits } from '#server/stale';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  const num = (name: string) => {
    const v = url.searchParams.get(name);
    return v === null || !/^\d+$/.test(v) ? undefined : Number(v);
  };
  return json({ ...staleFits(locals.app.db, campaign.id, { limit: num('limit'), offset: num('offset') }), preview: refitPreview(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(({ locals, params }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  return json(refitStaleStars(locals.app, actor, campaign.id), 201);
});
