// GET /api/campaigns/:id/review-queue: fits waiting for review, in star-key order, paged on the server
// (?cursor=&limit=) and filtered (?chi2RedBelow=&noFlags=1&teffMinK=&teffMaxK=&batchId=).
// Reviewers and analysts of the campaign, admins; collaborators see accepted results elsewhere.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle, json } from '#web/http';
import { filterFromSearch, getReviewSettings, queueQueryInput, reviewQueue } from '#server/review';
import { parseInput } from '#server/validation';

export const GET: APIRoute = handle(({ locals, params, url }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', ['reviewer', 'analyst'], { allowAdmin: true });
  const filter = filterFromSearch(url.searchParams);
  const page = parseInput(queueQueryInput, { cursor: url.searchParams.get('cursor') ?? undefined, limit: url.searchParams.get('limit') ?? undefined });
  return json({ filter, settings: getReviewSettings(locals.app.db, campaign.id), ...reviewQueue(locals.app.db, campaign.id, { filter, cursor: page.cursor, limit: page.limit }) });
});
