// Read models for the admin area: people and the mail outbox.
import { asc, count, desc, eq } from 'drizzle-orm';
import type { DbOrTx } from '../db/client';
import { campaignMembers, outboxMessages, user } from '../db/schema';

export function listUsers(db: DbOrTx) {
  const memberships = db
    .select({ userId: campaignMembers.userId, n: count() })
    .from(campaignMembers)
    .groupBy(campaignMembers.userId)
    .all();
  return db
    .select({ id: user.id, name: user.name, email: user.email, kind: user.kind, createdAt: user.createdAt })
    .from(user)
    .orderBy(asc(user.kind), asc(user.email))
    .all()
    .map((u) => ({ ...u, createdAt: u.createdAt.toISOString(), campaigns: memberships.find((m) => m.userId === u.id)?.n ?? 0 }));
}

export interface OutboxPage {
  total: number;
  messages: {
    id: number;
    kind: string;
    status: string;
    transport: string;
    toAddress: string;
    subject: string;
    createdAt: string;
  }[];
}

export function listOutbox(db: DbOrTx, options: { limit?: number; offset?: number; to?: string } = {}): OutboxPage {
  const limit = Math.min(Math.max(options.limit ?? 50, 1), 200);
  const offset = Math.max(options.offset ?? 0, 0);
  const where = options.to ? eq(outboxMessages.toAddress, options.to.toLowerCase()) : undefined;
  const total = db.select({ n: count() }).from(outboxMessages).where(where).get()?.n ?? 0;
  const messages = db
    .select({
      id: outboxMessages.id,
      kind: outboxMessages.kind,
      status: outboxMessages.status,
      transport: outboxMessages.transport,
      toAddress: outboxMessages.toAddress,
      subject: outboxMessages.subject,
      createdAt: outboxMessages.createdAt,
    })
    .from(outboxMessages)
    .where(where)
    .orderBy(desc(outboxMessages.id))
    .limit(limit)
    .offset(offset)
    .all()
    .map((m) => ({ ...m, createdAt: m.createdAt.toISOString() }));
  return { total, messages };
}

export function getOutboxMessage(db: DbOrTx, id: number) {
  const row = db.select().from(outboxMessages).where(eq(outboxMessages.id, id)).get();
  return row ? { ...row, createdAt: row.createdAt.toISOString(), sentAt: row.sentAt?.toISOString() ?? null } : null;
}
