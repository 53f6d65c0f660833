// E-mail through nodemailer. Every message is composed by nodemailer and recorded in the SQLite
// outbox; MAIL_TRANSPORT decides whether it also leaves the machine (smtp) or stays there (outbox).
// Swapping in a real SMTP server is configuration only (docs/decisions/0005-mail-outbox.md).
import { eq } from 'drizzle-orm';
import nodemailer from 'nodemailer';
import type { DbOrTx, AppDatabase } from '../db/client';
import { outboxMessages, type MailKind } from '../db/schema';

export interface MailMessage {
  kind: MailKind;
  to: string;
  subject: string;
  text: string;
  html?: string;
}

export interface PreparedMail extends MailMessage {
  from: string;
  messageId: string;
}

export interface Mailer {
  readonly transport: 'outbox' | 'smtp';
  /** Compose with nodemailer (async); nothing is stored yet. */
  prepare(message: MailMessage): Promise<PreparedMail>;
  /** Record a prepared message (synchronous, so it can join a database transaction). Returns its outbox id. */
  record(tx: DbOrTx, mail: PreparedMail): number;
  /** After the transaction commits: hand queued messages to SMTP. A no-op for the outbox transport. */
  dispatch(db: AppDatabase, outboxId: number): Promise<void>;
  /** prepare + record + dispatch, for messages that are not part of a larger write. */
  send(db: AppDatabase, message: MailMessage): Promise<number>;
}

export interface MailerConfig {
  transport: 'outbox' | 'smtp';
  smtpUrl?: string;
  from: string;
}

export function createMailer(config: MailerConfig): Mailer {
  // jsonTransport runs nodemailer's full message building (addresses, headers, Message-ID)
  // without delivering anything, which is exactly what the outbox needs.
  const composer = nodemailer.createTransport({ jsonTransport: true });
  const smtp = config.transport === 'smtp' ? nodemailer.createTransport(config.smtpUrl) : undefined;

  const mailer: Mailer = {
    transport: config.transport,
    async prepare(message) {
      const info = await composer.sendMail({
        from: config.from,
        to: message.to,
        subject: message.subject,
        text: message.text,
        html: message.html,
      });
      const built = JSON.parse(String(info.message)) as { messageId: string };
      return { ...message, from: config.from, messageId: built.messageId ?? info.messageId };
    },
    record(tx, mail) {
      const row = tx
        .insert(outboxMessages)
        .values({
          kind: mail.kind,
          transport: config.transport,
          status: config.transport === 'smtp' ? 'queued' : 'stored',
          messageId: mail.messageId,
          fromAddress: mail.from,
          toAddress: mail.to,
          subject: mail.subject,
          textBody: mail.text,
          htmlBody: mail.html ?? null,
        })
        .returning({ id: outboxMessages.id })
        .get();
      return row.id;
    },
    async dispatch(db, outboxId) {
      if (!smtp) return;
      const row = db.select().from(outboxMessages).where(eq(outboxMessages.id, outboxId)).get();
      if (!row || row.status !== 'queued') return;
      try {
        await smtp.sendMail({
          from: row.fromAddress,
          to: row.toAddress,
          subject: row.subject,
          text: row.textBody,
          html: row.htmlBody ?? undefined,
          messageId: row.messageId,
        });
        db.update(outboxMessages).set({ status: 'sent', sentAt: new Date(), error: null }).where(eq(outboxMessages.id, outboxId)).run();
      } catch (err) {
        // The message stays in the outbox marked failed, so an admin can see it and act.
        db.update(outboxMessages)
          .set({ status: 'failed', error: err instanceof Error ? err.message : String(err) })
          .where(eq(outboxMessages.id, outboxId))
          .run();
      }
    },
    async send(db, message) {
      const prepared = await mailer.prepare(message);
      const id = mailer.record(db, prepared);
      await mailer.dispatch(db, id);
      return id;
    },
  };
  return mailer;
}
