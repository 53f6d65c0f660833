import type { DbOrTx } from '../db/client';
import { auditEvents } from '../db/schema';

export function recordAudit(
  tx: DbOrTx,
  event: { actorId: string | null; action: string; campaignId?: string | null; details?: Record<string, unknown> },
): void {
  tx.insert(auditEvents)
    .values({ actorId: event.actorId, action: event.action, campaignId: event.campaignId ?? null, details: event.details ?? {} })
    .run();
}
