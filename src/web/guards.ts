// Authorisation lives in each handler: every API route and page calls one of these first.
// Middleware only identifies the person (docs/decisions/0004-authorisation-in-handlers.md).
import { getCampaign, getCampaignRoles } from '../server/campaigns';
import type { Actor, AppServices } from '../server/context';
import { forbidden, HttpError, unauthenticated } from '../server/errors';
import type { CampaignRole } from '../contracts/vocabulary';

export { HttpError } from '../server/errors';

/** The part of Astro's locals the guards read (kept structural so tests can pass a plain object). */
export interface GuardLocals {
  app: AppServices;
  actor: Actor | null;
}

export function requireUser(locals: GuardLocals): Actor {
  if (!locals.actor) throw unauthenticated();
  return locals.actor;
}

export function requireAdmin(locals: GuardLocals): Actor {
  const actor = requireUser(locals);
  if (actor.kind !== 'admin') throw forbidden('Only admins can do that.');
  return actor;
}

export interface CampaignAccess {
  actor: Actor;
  campaign: NonNullable<ReturnType<typeof getCampaign>>;
  roles: CampaignRole[];
}

/** What a non-member hears about any campaign id, existing or not: nothing tells the two apart. */
export const NO_SUCH_CAMPAIGN = 'No campaign with that id.';

/**
 * The signed-in person must hold one of `roles` in the campaign. Admins pass when `allowAdmin` is
 * set (they oversee every campaign) but never gain analyst or reviewer powers by default.
 * 'any' means any role at all, i.e. membership. Someone who is not a member gets the same 404 for
 * an existing campaign as for a missing one, so ids cannot be probed; an admin (who sees every
 * campaign listed anyway) is told 403 where the action needs a role.
 */
export function requireCampaignRole(
  locals: GuardLocals,
  campaignId: string,
  roles: readonly CampaignRole[] | 'any',
  options: { allowAdmin?: boolean } = {},
): CampaignAccess {
  const actor = requireUser(locals);
  const campaign = getCampaign(locals.app.db, campaignId);
  if (!campaign) throw new HttpError('not_found', NO_SUCH_CAMPAIGN);
  const mine = getCampaignRoles(locals.app.db, campaignId, actor.id);
  const ok = roles === 'any' ? mine.length > 0 : mine.some((r) => roles.includes(r));
  if (ok || (options.allowAdmin && actor.kind === 'admin')) return { actor, campaign, roles: mine };
  if (mine.length === 0 && actor.kind !== 'admin') throw new HttpError('not_found', NO_SUCH_CAMPAIGN);
  if (mine.length === 0) throw forbidden('You are not a member of this campaign.');
  throw forbidden(`This needs the ${(roles as readonly CampaignRole[]).join(' or ')} role in this campaign.`);
}
