// The audit trail's vocabulary: every action name written to audit_events (by src/server/audit.ts and
// by the review triggers of drizzle/0004, 0010 and 0011), and the JSON shapes its readers return
// (GET /api/admin/audit, GET /api/campaigns/:id/review/audit).

export const AUDIT_ACTIONS = [
  'batch.started',
  'batch.finished',
  'batch.cancelled',
  'band_library.band_added',
  'band_library.zero_point_changed',
  'campaign.created',
  'campaign.member_added',
  'campaign.invitation_sent',
  'campaign.invitation_accepted',
  'campaign.invitation_revoked',
  'campaign.member_roles_changed',
  'campaign.member_removed',
  'campaign.archived',
  'campaign.restored',
  'catalogue.released',
  'person.kind_changed',
  'person.deactivated',
  'person.reactivated',
  'review.accepted',
  'review.flagged',
  'review.bulk',
  'review.four_eyes_on',
  'review.four_eyes_off',
  'review.notice_sent',
  // Written by database triggers when a re-fit replaces a reviewed result.
  'review.superseded',
  'review.carried_over',
  'review.returned',
  'token.created',
  'token.revoked',
  'upload.received',
  'upload.rejected',
  'upload.imported',
  'intake.upload_withdrawn',
  'photometry.set_aside',
  'photometry.used_again',
] as const;
export type AuditAction = (typeof AUDIT_ACTIONS)[number];

/** The admin's log shows these (everything but the work inside campaigns: batches, reviews, uploads). */
export const ADMIN_AUDIT_PREFIXES = ['person.', 'band_library.', 'campaign.member', 'campaign.invitation', 'token.'] as const;

export interface AuditEntry {
  id: number;
  action: AuditAction;
  actor: { id: string; name: string; email: string } | null;
  campaign: { id: string; name: string } | null;
  details: Record<string, unknown>;
  createdAt: string;
}

export interface ReviewAuditEvent {
  id: number;
  actorId: string | null;
  action: AuditAction;
  details: Record<string, unknown>;
  createdAt: string;
}
