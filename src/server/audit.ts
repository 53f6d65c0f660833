// The audit trail, written and read here: every use case records what it did with recordAudit (in
// its own transaction), under an action name from the one vocabulary (src/contracts/audit.ts).
import type Database from 'better-sqlite3';
import type { AppDatabase, DbOrTx } from '../db/client';
import { auditEvents } from '../db/schema';
import { ADMIN_AUDIT_PREFIXES, type AuditAction, type AuditEntry, type ReviewAuditEvent } from '../contracts/audit';

export type { AuditAction, AuditEntry, ReviewAuditEvent };

export interface AuditEvent {
  actorId: string | null;
  action: AuditAction;
  campaignId?: string | null;
  details?: Record<string, unknown>;
}

export function recordAudit(tx: DbOrTx, event: AuditEvent): void {
  tx.insert(auditEvents)
    .values({ actorId: event.actorId, action: event.action, campaignId: event.campaignId ?? null, details: event.details ?? {} })
    .run();
}

/** The same, through the driver, for use cases that write with prepared statements in their own transaction. */
export function recordAuditSql(sqlite: Database.Database, event: AuditEvent): void {
  sqlite
    .prepare('INSERT INTO audit_events (actor_id, action, campaign_id, details) VALUES (?, ?, ?, ?)')
    .run(event.actorId, event.action, event.campaignId ?? null, JSON.stringify(event.details ?? {}));
}

/** The action of a review decision. */
export function reviewDecisionAction(decision: 'accepted' | 'flagged'): AuditAction {
  return decision === 'accepted' ? 'review.accepted' : 'review.flagged';
}

/** The action of a band library change. */
export function bandLibraryAction(change: 'band_added' | 'zero_point_changed'): AuditAction {
  return change === 'band_added' ? 'band_library.band_added' : 'band_library.zero_point_changed';
}

/** Whether reviewers were already told about this batch (one notice per batch). */
export function reviewNoticeSent(db: AppDatabase, campaignId: string, batchId: string): boolean {
  return !!db.$client
    .prepare("SELECT 1 FROM audit_events WHERE campaign_id = ? AND action = 'review.notice_sent' AND json_extract(details, '$.batchId') = ?")
    .get(campaignId, batchId);
}

/** Audit events of the review (decisions, supersessions, bulk actions, rule changes), newest first. */
export function reviewAudit(db: AppDatabase, campaignId: string, limit = 100): ReviewAuditEvent[] {
  const rows = db.$client
    .prepare("SELECT id, actor_id, action, details, created_at FROM audit_events WHERE campaign_id = ? AND action LIKE 'review.%' ORDER BY id DESC LIMIT ?")
    .all(campaignId, limit) as { id: number; actor_id: string | null; action: AuditAction; details: string; created_at: number }[];
  return rows.map((r) => ({ id: r.id, actorId: r.actor_id, action: r.action, details: JSON.parse(r.details) as Record<string, unknown>, createdAt: new Date(r.created_at).toISOString() }));
}

/** The audit log, newest first, paged on the server; optionally only one action prefix or one actor. */
export function auditLog(
  db: AppDatabase,
  options: { limit?: number; before?: number; scope?: 'admin' | 'all'; action?: string; actorId?: string } = {},
): { entries: AuditEntry[]; nextBefore: number | null; total: number } {
  const sqlite = db.$client;
  const limit = Math.min(200, Math.max(1, options.limit ?? 50));
  const clauses: string[] = [];
  const params: Record<string, unknown> = {};
  if ((options.scope ?? 'admin') === 'admin') {
    clauses.push(`(${ADMIN_AUDIT_PREFIXES.map((_, i) => `a.action LIKE @p${i}`).join(' OR ')})`);
    ADMIN_AUDIT_PREFIXES.forEach((p, i) => (params[`p${i}`] = `${p}%`));
  }
  if (options.action) {
    clauses.push('a.action LIKE @action');
    params.action = `${options.action}%`;
  }
  if (options.actorId) {
    clauses.push('a.actor_id = @actorId');
    params.actorId = options.actorId;
  }
  const filter = clauses.length ? clauses.join(' AND ') : '1';
  const total = sqlite.prepare(`SELECT count(*) FROM audit_events a WHERE ${filter}`).pluck().get(params) as number;
  // Keyset paging on the id: stable while new entries arrive.
  const page = options.before ? ' AND a.id < @before' : '';
  const rows = sqlite
    .prepare(
      `SELECT a.id, a.action, a.details, a.created_at, a.actor_id, u.name AS actor_name, u.email AS actor_email, a.campaign_id, c.name AS campaign_name
       FROM audit_events a LEFT JOIN user u ON u.id = a.actor_id LEFT JOIN campaigns c ON c.id = a.campaign_id
       WHERE ${filter}${page} ORDER BY a.id DESC LIMIT @limit`,
    )
    .all({ ...params, ...(options.before ? { before: options.before } : {}), limit: limit + 1 }) as {
    id: number;
    action: AuditAction;
    details: string;
    created_at: number;
    actor_id: string | null;
    actor_name: string | null;
    actor_email: string | null;
    campaign_id: string | null;
    campaign_name: string | null;
  }[];
  const more = rows.length > limit;
  const entries = rows.slice(0, limit).map((r) => ({
    id: r.id,
    action: r.action,
    actor: r.actor_id ? { id: r.actor_id, name: r.actor_name ?? '', email: r.actor_email ?? '' } : null,
    campaign: r.campaign_id ? { id: r.campaign_id, name: r.campaign_name ?? r.campaign_id } : null,
    details: JSON.parse(r.details) as Record<string, unknown>,
    createdAt: new Date(r.created_at).toISOString(),
  }));
  return { entries, nextBefore: more ? entries[entries.length - 1].id : null, total };
}
