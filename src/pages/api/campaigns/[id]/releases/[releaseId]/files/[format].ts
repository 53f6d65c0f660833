// GET /api/campaigns/:id/releases/:releaseId/files/:format — a frozen release's file, the bytes
// written at release time (any member or admin, by session or API token). The ETag and
// Repr-Digest headers carry its SHA-256, the one the release page lists.
import type { APIRoute } from 'astro';
import { requireCampaignRole } from '#web/guards';
import { handle } from '#web/http';
import { releaseFile } from '#server/releases';

export const GET: APIRoute = handle(({ locals, params }) => {
  const { campaign } = requireCampaignRole(locals, params.id ?? '', 'any', { allowAdmin: true });
  const f = releaseFile(locals.app.db, campaign.id, params.releaseId ?? '', params.format ?? '');
  return new Response(new Uint8Array(f.content), {
    status: 200,
    headers: {
      'content-type': f.contentType,
      'content-disposition': `attachment; filename="${f.fileName}"`,
      'content-length': String(f.content.length),
      etag: `"${f.sha256}"`,
      'repr-digest': `sha-256=:${Buffer.from(f.sha256, 'hex').toString('base64')}:`,
      'cache-control': 'private, max-age=31536000, immutable',
    },
  });
});
