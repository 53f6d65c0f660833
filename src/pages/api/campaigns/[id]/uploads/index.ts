// GET /api/campaigns/:id/uploads: recent uploads (analysts; admins may look).
// POST multipart/form-data with one file: store it, detect its format and columns (analysts only).
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { createUpload, listUploads } from '#server/intake/intake';
import { assertNotArchived } from '#server/members';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst'], { allowAdmin: true });
  return json({ uploads: listUploads(locals.app.db, campaign.id) });
});

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const { actor, campaign } = requireCampaignRole(locals, params.id ?? '', ['analyst']);
  assertNotArchived(locals.app.db, campaign.id);
  const upload = await createUpload(locals.app, actor, campaign.id, request);
  return json({ upload }, 201, { location: `/api/campaigns/${campaign.id}/uploads/${upload.id}` });
});
