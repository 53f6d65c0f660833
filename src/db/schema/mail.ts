// Every e-mail the service composes is kept here. With MAIL_TRANSPORT=outbox this table is the
// delivery (admins read it in the app, tests assert on it); with smtp it is the send log.
import { sql } from 'drizzle-orm';
import { index, integer, sqliteTable, text } from 'drizzle-orm/sqlite-core';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const MAIL_KINDS = ['invitation', 'password-reset', 'notice', 'review-notice'] as const;
export type MailKind = (typeof MAIL_KINDS)[number];

export const outboxMessages = sqliteTable(
  'outbox_messages',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    kind: text('kind', { enum: MAIL_KINDS }).notNull(),
    transport: text('transport', { enum: ['outbox', 'smtp'] }).notNull(),
    // stored: kept in the outbox only; queued: waiting for SMTP; sent / failed: SMTP outcome.
    status: text('status', { enum: ['stored', 'queued', 'sent', 'failed'] }).notNull(),
    messageId: text('message_id').notNull(),
    fromAddress: text('from_address').notNull(),
    toAddress: text('to_address').notNull(),
    subject: text('subject').notNull(),
    textBody: text('text_body').notNull(),
    htmlBody: text('html_body'),
    error: text('error'),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    sentAt: integer('sent_at', { mode: 'timestamp_ms' }),
  },
  (t) => [index('outbox_messages_to_idx').on(t.toAddress)],
);
