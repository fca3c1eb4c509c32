import fs from 'node:fs';
import { and, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord, staffByEmail } from './support';
import * as acknowledge from '@/app/api/alerts/[alertId]/acknowledge/route';
import * as alerts from '@/app/api/alerts/route';
import * as clinicalSettingsRoute from '@/app/api/admin/clinical/route';
import * as duty from '@/app/api/auth/me/duty/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import type { Database } from '@/db/client';
import { auditEvents, outboundMail, resultAlerts } from '@/db/schema';
import { escalateOverdueAlerts, escalationDue, minutesWaiting } from '@/lib/clinical/escalation';
import { deliverDueMail, transportFromEnv } from '@/lib/mail/queue';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { mailSink, type Sink } from '../helpers/mail';

// Critical results that reach someone: every veterinarian on duty sees them, and one nobody acknowledges
// within the clinic's set time is e-mailed to the escalation list (through the real local SMTP sink).
// The clock is passed in, so "10 minutes later" is a value, not a wait.
// Canine CRP critical limit 100 mg/L is the demo clinic's policy placeholder (no published source).

let database: Database;
let token: string;
let clinicId: string;
let c: { tech: string; vet: string; vet2: string; admin: string };
let juniper: string;
let sink: Sink;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  c = {
    tech: await signIn('tech@fernhollow.example'),
    vet: await signIn('vet@fernhollow.example'),
    vet2: await signIn('vet2@fernhollow.example'),
    admin: await signIn('admin@fernhollow.example'),
  };
  juniper = (await patientByRecord(database.db, clinicId, 'FH-1002')).id;
  sink = await mailSink();
  await sink.start();
});
afterAll(async () => {
  await sink.stop();
  fs.rmSync(sink.dir, { recursive: true, force: true });
});

/** A ">200 mg/L" CRP on Juniper (attending: vet@): certainly above the critical limit. Returns the alert. */
async function criticalAlert() {
  const readingId = await ingestOne(token, `esc-${String(++n).padStart(6, '0')}`, { value: 200, comparator: '>', raw: 'RESULT >200 mg/L\n' });
  const response = await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId: juniper } }), params({ readingId }));
  expect(response.status).toBe(200);
  const [alert] = await database.db.select().from(resultAlerts).where(eq(resultAlerts.readingId, readingId));
  return alert;
}
const openFor = async (cookie: string, mine: string) =>
  (await body(await alerts.GET(request(`/api/alerts?status=open&mine=${mine}`, { cookie }), undefined))).alerts.map((a: { id: string }) => a.id) as string[];
const setSettings = (value: unknown) => clinicalSettingsRoute.PATCH(request('/api/admin/clinical', { method: 'PATCH', cookie: c.admin, body: value }), undefined);

describe('every veterinarian on duty sees a critical result, not only the attending one', () => {
  it('a second veterinarian on duty has it in the header count; off duty, only their own patients', async () => {
    const alert = await criticalAlert();
    // Both veterinarians start on duty (the default).
    expect(await openFor(c.vet2, 'duty')).toContain(alert.id);
    expect(await openFor(c.vet, 'duty')).toContain(alert.id);

    const off = await duty.POST(request('/api/auth/me/duty', { cookie: c.vet2, body: { onDuty: false } }), undefined);
    expect(off.status).toBe(200);
    expect(await openFor(c.vet2, 'duty')).not.toContain(alert.id);
    const on = await duty.POST(request('/api/auth/me/duty', { cookie: c.vet2, body: { onDuty: true } }), undefined);
    expect(on.status).toBe(200);
    expect(await openFor(c.vet2, 'duty')).toContain(alert.id);

    const vet2 = await staffByEmail(database.db, 'vet2@fernhollow.example');
    const trail = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityType, 'staff_user'), eq(auditEvents.entityId, vet2.id)));
    expect(trail.map((t) => t.action)).toEqual(expect.arrayContaining(['staff.off-duty', 'staff.on-duty']));
    // Technicians have no duty switch for critical results.
    expect((await duty.POST(request('/api/auth/me/duty', { cookie: c.tech, body: { onDuty: true } }), undefined)).status).toBe(403);
    expect((await duty.POST(request('/api/auth/me/duty', { cookie: c.vet, body: { onDuty: 'yes' } }), undefined)).status).toBe(400);
  });
});

describe('escalation by e-mail after the set time', () => {
  it('settings are validated and kept', async () => {
    expect((await setSettings({ criticalEscalationMinutes: 0 })).status).toBe(400);
    expect((await setSettings({ escalationEmails: ['not an address'] })).status).toBe(400);
    const ok = await setSettings({ criticalEscalationMinutes: 10, escalationEmails: ['Duty-Phone@fernhollow.example', 'manager@fernhollow.example'] });
    expect(ok.status).toBe(200);
    expect((await body(ok)).settings).toMatchObject({ criticalEscalationMinutes: 10, escalationEmails: ['duty-phone@fernhollow.example', 'manager@fernhollow.example'] });
  });

  it('pure timing: due at exactly the set minutes, not a millisecond before', () => {
    const createdAt = new Date('2026-03-02T09:00:00Z');
    expect(escalationDue({ createdAt }, 10, new Date('2026-03-02T09:09:59.999Z'))).toBe(false);
    expect(escalationDue({ createdAt }, 10, new Date('2026-03-02T09:10:00Z'))).toBe(true);
    expect(minutesWaiting({ createdAt }, new Date('2026-03-02T09:12:30Z'))).toBe(12);
    expect(minutesWaiting({ createdAt, acknowledgedAt: new Date('2026-03-02T09:04:00Z') }, new Date('2026-03-02T10:00:00Z'))).toBe(4);
  });

  it('an unacknowledged critical is e-mailed once at 10 min, audited, and shown as escalated', async () => {
    await escalateOverdueAlerts(new Date()); // older alerts from the test above
    const alert = await criticalAlert();
    const t = (ms: number) => new Date(alert.createdAt.getTime() + ms);
    expect(await escalateOverdueAlerts(t(10 * 60_000 - 1))).not.toContain(alert.id);
    expect((await database.db.select().from(resultAlerts).where(eq(resultAlerts.id, alert.id)))[0].escalatedAt).toBeNull();

    expect(await escalateOverdueAlerts(t(10 * 60_000))).toContain(alert.id);
    const [after] = await database.db.select().from(resultAlerts).where(eq(resultAlerts.id, alert.id));
    expect(after.escalatedAt?.getTime()).toBe(t(10 * 60_000).getTime());
    expect(after.acknowledgedAt).toBeNull(); // still open: escalation does not acknowledge anything
    // Once only.
    expect(await escalateOverdueAlerts(t(30 * 60_000))).not.toContain(alert.id);

    const [mail] = await database.db.select().from(outboundMail).where(eq(outboundMail.id, after.escalationMailId!));
    expect(mail).toMatchObject({ purpose: 'alert-escalation', toAddresses: ['duty-phone@fernhollow.example', 'manager@fernhollow.example'], status: 'queued' });

    const trail = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, alert.id));
    expect(trail.map((e) => e.action)).toEqual(['alert.raised', 'alert.escalated']);
    expect(trail[1].details).toMatchObject({ minutesWaited: 10, afterMinutes: 10, mailId: mail.id });
    const readingTrail = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, alert.readingId));
    expect(readingTrail.map((e) => e.action)).toContain('reading.critical-escalated');

    const listed = (await body(await alerts.GET(request('/api/alerts?status=open', { cookie: c.vet }), undefined))).alerts.find((a: { id: string }) => a.id === alert.id);
    expect(listed.escalatedAt).toBe(t(10 * 60_000).toISOString());

    // Delivered through the real SMTP sink.
    await deliverDueMail({ now: t(10 * 60_000), transport: transportFromEnv({ SMTP_URL: sink.url }) });
    const received = (await sink.waitForMessages(1)).find((m) => m.headers.get('x-benchwire-mail-id') === mail.id)!;
    expect(received.subject).toBe('Critical result not acknowledged for 10 min: Juniper (FH-1002)');
    expect(received.text).toContain('cCRP >200 mg/L for Juniper (FH-1002): above the critical limit 100 mg/L.');
    expect(received.text).toContain('never replace');
    const to = (Array.isArray(received.to) ? received.to : [received.to]).flatMap((a) => a!.value.map((v) => v.address));
    expect(to).toEqual(['duty-phone@fernhollow.example', 'manager@fernhollow.example']);
    expect((await database.db.select().from(outboundMail).where(eq(outboundMail.id, mail.id)))[0].status).toBe('sent');
  });

  it('an acknowledged critical is never escalated', async () => {
    const alert = await criticalAlert();
    const ack = await acknowledge.POST(request('/api/alerts/x/acknowledge', { cookie: c.vet2, body: { note: 'Seen, treating' } }), params({ alertId: alert.id }));
    expect(ack.status).toBe(200);
    expect(await escalateOverdueAlerts(new Date(alert.createdAt.getTime() + 60 * 60_000))).not.toContain(alert.id);
  });

  it('with no escalation list nothing is sent and the alert stays open, not marked', async () => {
    expect((await setSettings({ escalationEmails: [] })).status).toBe(200);
    const alert = await criticalAlert();
    expect(await escalateOverdueAlerts(new Date(alert.createdAt.getTime() + 60 * 60_000))).toEqual([]);
    const [after] = await database.db.select().from(resultAlerts).where(eq(resultAlerts.id, alert.id));
    expect(after.escalatedAt).toBeNull();
    expect(await openFor(c.vet2, 'duty')).toContain(alert.id);
  });
});
