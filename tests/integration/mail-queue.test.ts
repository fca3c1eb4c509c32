import fs from 'node:fs';
import { eq } from 'drizzle-orm';
import { SMTPServer } from 'smtp-server';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body } from './support';
import * as mailList from '@/app/api/admin/mail/route';
import * as mailRetry from '@/app/api/admin/mail/[mailId]/retry/route';
import type { Database } from '@/db/client';
import { auditEvents, outboundMail } from '@/db/schema';
import { deliverDueMail, enqueueMail, isPermanentFailure, retryDelayMs, transportFromEnv } from '@/lib/mail/queue';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { freePort } from '@/bridge/testing/server';
import { mailSink, type Sink } from '../helpers/mail';

// The e-mail queue against the real local SMTP sink (smtp-server on loopback), read back with mailparser.

let database: Database;
let clinicId: string;
let sink: Sink;
let admin: string;
let vet: string;

beforeAll(async () => {
  ({ database, clinicId } = await seededDatabase());
  sink = await mailSink();
  await sink.start();
  admin = await signIn('admin@fernhollow.example');
  vet = await signIn('vet@fernhollow.example');
});
afterAll(async () => {
  await sink.stop();
  fs.rmSync(sink.dir, { recursive: true, force: true });
});

const queue = (to: string[], extra: Partial<Parameters<typeof enqueueMail>[1]> = {}) =>
  database.db.transaction((tx) => enqueueMail(tx, { clinicId, purpose: 'report', to, subject: 'Test subject', text: 'Plain body', ...extra }));
const row = async (id: string) => (await database.db.select().from(outboundMail).where(eq(outboundMail.id, id)))[0];

describe('backoff', () => {
  it('doubles from 30 s and stops at 30 min (RFC 5321 §4.5.4.1: retry interval at least 30 minutes)', () => {
    // Exponential backoff itself is common practice, no source.
    expect([1, 2, 3, 4, 5, 6, 7, 8].map(retryDelayMs)).toEqual([30e3, 60e3, 120e3, 240e3, 480e3, 960e3, 1800e3, 1800e3]);
  });
  it('treats 5yz replies as permanent and 4yz / network errors as transient (RFC 5321 §4.2.1)', () => {
    expect(isPermanentFailure({ responseCode: 550 })).toBe(true);
    expect(isPermanentFailure({ responseCode: 451 })).toBe(false);
    expect(isPermanentFailure(Object.assign(new Error('connect ECONNREFUSED'), { code: 'ECONNREFUSED' }))).toBe(false);
  });
});

describe('delivery through the local SMTP sink', () => {
  it('sends text, HTML and an attachment exactly as queued', async () => {
    const pdf = Buffer.from('%PDF-1.7\n% test bytes, not a real report\n%%EOF\n');
    const mail = await queue(['owner@example.org'], {
      subject: 'Results for Biscuit',
      text: 'Dear owner,\nthe results are attached.',
      html: '<p>Dear owner,</p><p>the results are <strong>attached</strong>.</p>',
      attachments: [{ filename: 'biscuit-results.pdf', contentType: 'application/pdf', contentBase64: pdf.toString('base64') }],
    });
    expect(mail.status).toBe('queued');
    const outcome = await deliverDueMail({ transport: transportFromEnv({ SMTP_URL: sink.url }) });
    expect(outcome).toMatchObject({ attempted: 1, sent: 1, failed: 0 });
    const [received] = await sink.waitForMessages(1);
    expect(received.subject).toBe('Results for Biscuit');
    expect(received.text?.trim()).toBe('Dear owner,\nthe results are attached.');
    expect(received.html).toContain('<strong>attached</strong>');
    expect((Array.isArray(received.to) ? received.to[0] : received.to)?.value[0].address).toBe('owner@example.org');
    expect(received.attachments).toHaveLength(1);
    expect(received.attachments[0]).toMatchObject({ filename: 'biscuit-results.pdf', contentType: 'application/pdf' });
    expect(Buffer.compare(received.attachments[0].content, pdf)).toBe(0);
    expect(received.headers.get('x-benchwire-mail-id')).toBe(mail.id);
    const after = await row(mail.id);
    expect(after).toMatchObject({ status: 'sent', attempts: 1, lastError: null });
    expect(after.messageId).toBe(received.messageId);
    const audit = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, mail.id));
    expect(audit.map((a) => a.action)).toEqual(['mail.queued', 'mail.sent']);
  });

  it('keeps retrying with backoff while the sink is down, and delivers once it is back', async () => {
    const downPort = await freePort();
    const transport = () => transportFromEnv({ SMTP_URL: `smtp://127.0.0.1:${downPort}` });
    const t0 = new Date('2026-03-02T09:00:00Z');
    const mail = await queue(['referrals@example.org'], { subject: 'Retry me', now: t0 });

    const first = await deliverDueMail({ now: t0, transport: transport() });
    expect(first).toMatchObject({ attempted: 1, sent: 0, failed: 0 });
    let state = await row(mail.id);
    expect(state.status).toBe('queued');
    expect(state.attempts).toBe(1);
    expect(state.lastError).toMatch(/ECONNREFUSED/);
    expect(state.nextAttemptAt.getTime()).toBe(t0.getTime() + 30_000);

    // Not due yet: nothing is attempted before the backoff has passed.
    expect(await deliverDueMail({ now: new Date(t0.getTime() + 29_000), transport: transport() })).toMatchObject({ attempted: 0 });

    await deliverDueMail({ now: new Date(t0.getTime() + 30_000), transport: transport() });
    state = await row(mail.id);
    expect(state.attempts).toBe(2);
    expect(state.nextAttemptAt.getTime()).toBe(t0.getTime() + 30_000 + 60_000);

    // The sink comes up on that port; the next due attempt goes through.
    const back = new SMTPServer({ authOptional: true, disabledCommands: ['STARTTLS'], onData: (stream, _s, cb) => { stream.resume(); stream.on('end', () => cb()); } });
    await new Promise<void>((resolve) => back.listen(downPort, '127.0.0.1', () => resolve()));
    try {
      expect(await deliverDueMail({ now: new Date(t0.getTime() + 90_000), transport: transport() })).toMatchObject({ attempted: 1, sent: 1 });
    } finally {
      await new Promise<void>((resolve) => back.close(() => resolve()));
    }
    state = await row(mail.id);
    expect(state).toMatchObject({ status: 'sent', attempts: 3, lastError: null });
    const audit = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, mail.id));
    expect(audit.map((a) => a.action)).toEqual(['mail.queued', 'mail.retry-scheduled', 'mail.retry-scheduled', 'mail.sent']);
  });

  it('a permanent refusal (550) fails at once and stays listed with the server’s answer; an admin can queue it again', async () => {
    const port = await freePort();
    const refusing = new SMTPServer({
      authOptional: true,
      disabledCommands: ['STARTTLS'],
      onRcptTo(address, _session, callback) {
        callback(Object.assign(new Error(`No such mailbox: ${address.address}`), { responseCode: 550 }));
      },
    });
    await new Promise<void>((resolve) => refusing.listen(port, '127.0.0.1', () => resolve()));
    const mail = await queue(['nobody@example.org'], { subject: 'Refused' });
    try {
      expect(await deliverDueMail({ transport: transportFromEnv({ SMTP_URL: `smtp://127.0.0.1:${port}` }) })).toMatchObject({ attempted: 1, failed: 1 });
    } finally {
      await new Promise<void>((resolve) => refusing.close(() => resolve()));
    }
    const state = await row(mail.id);
    expect(state.status).toBe('failed');
    expect(state.lastError).toMatch(/550/);

    const listed = await body(await mailList.GET(request('/api/admin/mail?status=failed', { cookie: admin }), undefined));
    expect(listed.mail.map((m: { id: string }) => m.id)).toContain(mail.id);
    expect((await mailList.GET(request('/api/admin/mail', { cookie: vet }), undefined)).status).toBe(403);

    const again = await mailRetry.POST(request('/api/admin/mail/x/retry', { cookie: admin, body: {} }), params({ mailId: mail.id }));
    expect(again.status).toBe(200);
    expect((await row(mail.id)).status).toBe('queued');
    const twice = await mailRetry.POST(request('/api/admin/mail/x/retry', { cookie: admin, body: {} }), params({ mailId: mail.id }));
    expect(twice.status).toBe(409);
    // Now the real sink takes it.
    await deliverDueMail({ transport: transportFromEnv({ SMTP_URL: sink.url }) });
    expect((await row(mail.id)).status).toBe('sent');
  });

  it('without SMTP_URL a message waits in the queue with a clear reason, never dropped', async () => {
    const mail = await queue(['someone@example.org'], { subject: 'No server' });
    await deliverDueMail({ transport: null });
    const state = await row(mail.id);
    expect(state.status).toBe('queued');
    expect(state.lastError).toBe('No mail server is configured (set SMTP_URL).');
  });

  it('gives up after its last attempt and marks the message failed', async () => {
    const downPort = await freePort();
    const t0 = new Date('2026-03-02T10:00:00Z');
    const mail = await queue(['late@example.org'], { subject: 'Gives up', now: t0 });
    await database.db.update(outboundMail).set({ maxAttempts: 2 }).where(eq(outboundMail.id, mail.id));
    const transport = transportFromEnv({ SMTP_URL: `smtp://127.0.0.1:${downPort}` });
    await deliverDueMail({ now: t0, transport });
    await deliverDueMail({ now: new Date(t0.getTime() + 30_000), transport });
    expect(await row(mail.id)).toMatchObject({ status: 'failed', attempts: 2 });
  });
});
