import 'server-only';
import { and, asc, desc, eq, lte } from 'drizzle-orm';
import nodemailer from 'nodemailer';
import type { Executor } from '@/db/client';
import { db } from '@/db/client';
import { outboundMail, type MailAttachment, type OutboundMail } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';

// Every e-mail goes through this queue: the caller enqueues it in its own transaction (so a rolled-back
// change sends nothing), and deliverDueMail sends what is due, retrying with backoff. A message that
// cannot be delivered ends as 'failed' and stays listed, with the server's last answer.

export interface NewMail {
  clinicId: string;
  purpose: 'report' | 'alert-escalation' | 'invitation' | 'password-reset';
  to: string[];
  subject: string;
  text: string;
  html?: string | null;
  attachments?: MailAttachment[];
  patientId?: string | null;
  createdBy?: string | null;
  /** For tests and the escalation worker: the queue's clock. */
  now?: Date;
}

export async function enqueueMail(tx: Executor, mail: NewMail): Promise<OutboundMail> {
  if (!mail.to.length) throw new ApiError(400, 'no_recipient', 'An e-mail needs at least one recipient.');
  const [row] = await tx
    .insert(outboundMail)
    .values({
      clinicId: mail.clinicId,
      purpose: mail.purpose,
      toAddresses: mail.to,
      subject: mail.subject,
      textBody: mail.text,
      htmlBody: mail.html ?? null,
      attachments: mail.attachments ?? [],
      patientId: mail.patientId ?? null,
      createdBy: mail.createdBy ?? null,
      nextAttemptAt: mail.now ?? new Date(),
      ...(mail.now ? { createdAt: mail.now } : {}),
    })
    .returning();
  await recordAudit(tx, {
    clinicId: mail.clinicId,
    actorUserId: mail.createdBy ?? null,
    action: 'mail.queued',
    entityType: 'mail',
    entityId: row.id,
    details: { purpose: mail.purpose, to: mail.to, subject: mail.subject, ...(mail.patientId ? { patientId: mail.patientId } : {}) },
  });
  return row;
}

/**
 * Wait before attempt n+1 after n failed attempts: 30 s, 1, 2, 4, 8 min…, at most 30 min. Exponential
 * backoff is common practice (no source); RFC 5321 §4.5.4.1 suggests a client retry interval of at least
 * 30 minutes between attempts at one destination for queued mail, which is the cap here.
 */
export function retryDelayMs(failedAttempts: number): number {
  const base = 30_000 * 2 ** Math.max(0, failedAttempts - 1);
  return Math.min(base, 30 * 60_000);
}

/** RFC 5321 §4.2.1: a 5yz reply is a permanent failure (retrying the same message will not help). */
export function isPermanentFailure(error: unknown): boolean {
  const code = (error as { responseCode?: number } | null)?.responseCode;
  return typeof code === 'number' && code >= 500 && code < 600;
}

const SECRET_PURPOSES = new Set(['invitation', 'password-reset']);

export const DEFAULT_MAIL_FROM = 'Benchwire <no-reply@benchwire.invalid>';

/** The SMTP transport from SMTP_URL (e.g. smtp://127.0.0.1:2525), or null when none is configured. */
export function transportFromEnv(env: Partial<Record<string, string>> = process.env) {
  const url = env.SMTP_URL?.trim();
  if (!url) return null;
  return nodemailer.createTransport({
    url,
    // Fail an attempt in seconds rather than hanging the worker; the queue retries later.
    connectionTimeout: 10_000,
    greetingTimeout: 10_000,
    socketTimeout: 30_000,
  } as Parameters<typeof nodemailer.createTransport>[0]);
}

type Transport = Pick<ReturnType<typeof nodemailer.createTransport>, 'sendMail'>;

/**
 * Sends every queued message that is due at `now` (at most `limit`), oldest first, and records each
 * outcome. Returns how many were sent and how many failed this round.
 */
export async function deliverDueMail(options: { now?: Date; transport?: Transport | null; from?: string; limit?: number } = {}) {
  const now = options.now ?? new Date();
  const transport = options.transport === undefined ? transportFromEnv() : options.transport;
  const from = options.from ?? process.env.MAIL_FROM ?? DEFAULT_MAIL_FROM;
  const database = await db();
  const due = await database
    .select()
    .from(outboundMail)
    .where(and(eq(outboundMail.status, 'queued'), lte(outboundMail.nextAttemptAt, now)))
    .orderBy(asc(outboundMail.nextAttemptAt))
    .limit(options.limit ?? 20);
  let sent = 0;
  let failed = 0;
  for (const mail of due) {
    let outcome: { ok: true; messageId: string } | { ok: false; error: string; permanent: boolean };
    if (!transport) {
      outcome = { ok: false, error: 'No mail server is configured (set SMTP_URL).', permanent: false };
    } else {
      try {
        const info = await transport.sendMail({
          from,
          to: mail.toAddresses,
          subject: mail.subject,
          text: mail.textBody,
          ...(mail.htmlBody ? { html: mail.htmlBody } : {}),
          attachments: mail.attachments.map((a) => ({ filename: a.filename, contentType: a.contentType, content: Buffer.from(a.contentBase64, 'base64') })),
          headers: { 'X-Benchwire-Mail-Id': mail.id },
        });
        outcome = { ok: true, messageId: String(info.messageId ?? '') };
      } catch (error) {
        outcome = { ok: false, error: error instanceof Error ? error.message : String(error), permanent: isPermanentFailure(error) };
      }
    }
    await database.transaction(async (tx) => {
      const attempts = mail.attempts + 1;
      if (outcome.ok) {
        // A message that carries a sign-in link keeps no copy of it once delivered.
        const redact = SECRET_PURPOSES.has(mail.purpose) ? { textBody: '(the link was removed after sending)', htmlBody: null } : {};
        await tx
          .update(outboundMail)
          .set({ status: 'sent', attempts, lastAttemptAt: now, sentAt: now, messageId: outcome.messageId, lastError: null, ...redact })
          .where(eq(outboundMail.id, mail.id));
        await recordAudit(tx, { clinicId: mail.clinicId, action: 'mail.sent', entityType: 'mail', entityId: mail.id, details: { attempts, messageId: outcome.messageId } });
        sent += 1;
      } else {
        const giveUp = outcome.permanent || attempts >= mail.maxAttempts;
        await tx
          .update(outboundMail)
          .set({
            status: giveUp ? 'failed' : 'queued',
            attempts,
            lastAttemptAt: now,
            lastError: outcome.error.slice(0, 1000),
            nextAttemptAt: giveUp ? now : new Date(now.getTime() + retryDelayMs(attempts)),
          })
          .where(eq(outboundMail.id, mail.id));
        await recordAudit(tx, {
          clinicId: mail.clinicId,
          action: giveUp ? 'mail.failed' : 'mail.retry-scheduled',
          entityType: 'mail',
          entityId: mail.id,
          details: { attempts, error: outcome.error.slice(0, 500), permanent: outcome.permanent },
        });
        if (giveUp) failed += 1;
      }
      await publish(tx, { type: 'mail.updated', clinicId: mail.clinicId, id: mail.id, ...(mail.patientId ? { patientId: mail.patientId } : {}) });
    });
  }
  return { attempted: due.length, sent, failed };
}

/** Puts a failed message back in the queue (an administrator fixed the address or the mail server). */
export async function retryMail(actor: Actor, mailId: string) {
  requirePermission(actor, 'manageClinic', 'Only administrators retry e-mail.');
  const database = await db();
  return database.transaction(async (tx) => {
    const [mail] = await tx
      .select()
      .from(outboundMail)
      .where(and(eq(outboundMail.id, mailId), eq(outboundMail.clinicId, actor.clinicId)))
      .for('update');
    if (!mail) throw notFound('The e-mail');
    if (mail.status !== 'failed') throw new ApiError(409, 'not_failed', 'Only a failed e-mail can be sent again.');
    const [row] = await tx
      .update(outboundMail)
      .set({ status: 'queued', nextAttemptAt: new Date(), maxAttempts: mail.attempts + 6 })
      .where(eq(outboundMail.id, mailId))
      .returning();
    await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'mail.requeued', entityType: 'mail', entityId: mailId });
    await publish(tx, { type: 'mail.updated', clinicId: actor.clinicId, id: mailId, ...(mail.patientId ? { patientId: mail.patientId } : {}) });
    return row;
  });
}

const listColumns = {
  id: outboundMail.id,
  purpose: outboundMail.purpose,
  toAddresses: outboundMail.toAddresses,
  subject: outboundMail.subject,
  status: outboundMail.status,
  attempts: outboundMail.attempts,
  maxAttempts: outboundMail.maxAttempts,
  nextAttemptAt: outboundMail.nextAttemptAt,
  lastAttemptAt: outboundMail.lastAttemptAt,
  lastError: outboundMail.lastError,
  sentAt: outboundMail.sentAt,
  patientId: outboundMail.patientId,
  createdAt: outboundMail.createdAt,
};

/** The clinic's e-mail, newest first, with delivery state (administrators). */
export async function listMail(actor: Actor, filter: { status?: 'queued' | 'sent' | 'failed' } = {}) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database
    .select(listColumns)
    .from(outboundMail)
    .where(and(eq(outboundMail.clinicId, actor.clinicId), filter.status ? eq(outboundMail.status, filter.status) : undefined))
    .orderBy(desc(outboundMail.createdAt))
    .limit(200);
}
export type MailView = Awaited<ReturnType<typeof listMail>>[number];
