// GET /api/campaigns/:id/review/audit?limit=: the review's audit trail, newest first — every
// decision with who and when, supersessions by re-fit, bulk actions with their filter, changes of
// the four-eyes rule, notices sent (reviewers and analysts of the campaign, admins).
import type { APIRoute } from 'astro';
import { z } from 'zod';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { reviewAudit } from '#server/review';
import { parseInput } from '#server/validation';

const query = z.object({
  limit: z.coerce.number({ error: 'limit must be a number.' }).int('limit must be a whole number.').min(1, 'limit must be at least 1.').max(500, 'limit can be at most 500.').default(100),
});

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['reviewer', 'analyst'], { allowAdmin: true });
  const { limit } = parseInput(query, { limit: url.searchParams.get('limit') ?? undefined });
  return json({ events: reviewAudit(locals.app.db, campaign.id, limit) });
});
