// DELETE /api/tokens/:tokenId: revoke one of your tokens (a script may revoke the token it uses).
import type { APIRoute } from 'astro';
import { requireUser } from '../../../web/guards';
import { handle, json } from '../../../web/http';
import { revokeApiToken } from '../../../server/api-tokens';

export const DELETE: APIRoute = handle(({ locals, params }) => {
  const actor = requireUser(locals);
  return json({ token: revokeApiToken(locals.app.db, actor, params.tokenId ?? '') });
});
