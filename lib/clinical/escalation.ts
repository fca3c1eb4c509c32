import 'server-only';
import { and, asc, eq, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { clinics, patients, resultAlerts, staffUsers } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import type { Actor } from '@/lib/auth/guards';
import { requirePermission } from '@/lib/auth/guards';
import { ApiError } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { enqueueMail } from '@/lib/mail/queue';
import { CLINICAL_CAUTION_TEXT } from '@/lib/format';
import { escapeHtml } from '@/lib/mail/compose';
import { clinicalSettings } from './config';

// A critical result that nobody acknowledges must still reach someone: after the clinic's set time it is
// e-mailed to the escalation list the administrator keeps. Every step is in the audit trail.

/** Minutes an alert has waited (until acknowledged, or until `now`). */
export function minutesWaiting(alert: { createdAt: Date; acknowledgedAt?: Date | null }, now: Date): number {
  const end = alert.acknowledgedAt ?? now;
  return Math.max(0, Math.floor((end.getTime() - alert.createdAt.getTime()) / 60_000));
}

/** Whether an open, not yet escalated alert is due for escalation at `now`. */
export function escalationDue(alert: { createdAt: Date }, minutes: number, now: Date): boolean {
  return now.getTime() - alert.createdAt.getTime() >= minutes * 60_000;
}

function appLink(path: string): string | null {
  const base = process.env.APP_URL?.trim().replace(/\/+$/, '');
  return base ? base + path : null;
}

/**
 * Escalates every open critical alert that has waited at least the clinic's set time (clock: `now`).
 * Each escalation is one transaction: the mail is queued, the alert marked, the audit written, the live
 * event published. Alerts of a clinic with no escalation list stay open and are not marked.
 */
export async function escalateOverdueAlerts(now: Date = new Date()) {
  const database = await db();
  const open = await database
    .select({ id: resultAlerts.id, clinicId: resultAlerts.clinicId, createdAt: resultAlerts.createdAt })
    .from(resultAlerts)
    .where(and(isNull(resultAlerts.acknowledgedAt), isNull(resultAlerts.withdrawnAt), isNull(resultAlerts.escalatedAt)))
    .orderBy(asc(resultAlerts.createdAt))
    .limit(500);
  const settingsByClinic = new Map<string, Awaited<ReturnType<typeof clinicalSettings>>>();
  const escalated: string[] = [];
  for (const candidate of open) {
    let settings = settingsByClinic.get(candidate.clinicId);
    if (!settings) {
      settings = await clinicalSettings(database, candidate.clinicId);
      settingsByClinic.set(candidate.clinicId, settings);
    }
    if (!settings.escalationEmails.length) continue;
    if (!escalationDue(candidate, settings.criticalEscalationMinutes, now)) continue;
    const done = await database.transaction(async (tx) => {
      const [row] = await tx
        .select({ alert: resultAlerts, patientName: patients.name, recordNumber: patients.recordNumber, clinicName: clinics.name, attendingName: staffUsers.displayName })
        .from(resultAlerts)
        .innerJoin(patients, eq(patients.id, resultAlerts.patientId))
        .innerJoin(clinics, eq(clinics.id, resultAlerts.clinicId))
        .leftJoin(staffUsers, eq(staffUsers.id, resultAlerts.recipientId))
        .where(eq(resultAlerts.id, candidate.id))
        .for('update', { of: resultAlerts });
      // Acknowledged or withdrawn meanwhile: nothing to escalate.
      if (!row || row.alert.acknowledgedAt || row.alert.withdrawnAt || row.alert.escalatedAt) return false;
      const waited = minutesWaiting(row.alert, now);
      const link = appLink(`/patients/${row.alert.patientId}`);
      const subject = `Critical result not acknowledged for ${waited} min: ${row.patientName} (${row.recordNumber})`;
      const text = [
        `${row.clinicName}: a critical result has not been acknowledged by any veterinarian for ${waited} minutes.`,
        '',
        row.alert.message,
        `Raised: ${row.alert.createdAt.toISOString()}`,
        `Attending veterinarian: ${row.attendingName ?? 'none recorded'}`,
        link ? `Open the chart: ${link}` : 'Open the patient’s chart in Benchwire to acknowledge it.',
        '',
        CLINICAL_CAUTION_TEXT,
      ].join('\n');
      const html = `<p><strong>${escapeHtml(row.clinicName)}</strong>: a critical result has not been acknowledged by any veterinarian for <strong>${waited} minutes</strong>.</p>
<p style="font-size:16px;color:#9b1c1c"><strong>${escapeHtml(row.alert.message)}</strong></p>
<p>Raised: ${escapeHtml(row.alert.createdAt.toISOString())}<br>Attending veterinarian: ${escapeHtml(row.attendingName ?? 'none recorded')}</p>
<p>${link ? `<a href="${escapeHtml(link)}">Open the chart</a>` : 'Open the patient’s chart in Benchwire to acknowledge it.'}</p>
<p style="color:#555;font-size:12px">${escapeHtml(CLINICAL_CAUTION_TEXT)}</p>`;
      const mail = await enqueueMail(tx, {
        clinicId: row.alert.clinicId,
        purpose: 'alert-escalation',
        to: settings.escalationEmails,
        subject,
        text,
        html,
        patientId: row.alert.patientId,
        now,
      });
      await tx.update(resultAlerts).set({ escalatedAt: now, escalationMailId: mail.id }).where(eq(resultAlerts.id, row.alert.id));
      const details = { readingId: row.alert.readingId, minutesWaited: waited, afterMinutes: settings.criticalEscalationMinutes, to: settings.escalationEmails, mailId: mail.id };
      await recordAudit(tx, { clinicId: row.alert.clinicId, action: 'alert.escalated', entityType: 'alert', entityId: row.alert.id, details });
      await recordAudit(tx, { clinicId: row.alert.clinicId, action: 'reading.critical-escalated', entityType: 'reading', entityId: row.alert.readingId, details: { alertId: row.alert.id, ...details } });
      await publish(tx, { type: 'alert.escalated', clinicId: row.alert.clinicId, id: row.alert.id, patientId: row.alert.patientId });
      return true;
    });
    if (done) escalated.push(candidate.id);
  }
  return escalated;
}

/** A veterinarian goes on or off duty; on duty, every open critical result reaches them live. */
export async function setOnDuty(actor: Actor, onDuty: boolean) {
  requirePermission(actor, 'reviewResults', 'Only veterinarians go on and off duty for critical results.');
  const database = await db();
  return database.transaction(async (tx) => {
    const [row] = await tx
      .update(staffUsers)
      .set({ onDuty })
      .where(and(eq(staffUsers.id, actor.userId), eq(staffUsers.clinicId, actor.clinicId)))
      .returning({ id: staffUsers.id, onDuty: staffUsers.onDuty });
    if (!row) throw new ApiError(404, 'not_found', 'Your staff record was not found.');
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: onDuty ? 'staff.on-duty' : 'staff.off-duty',
      entityType: 'staff_user',
      entityId: actor.userId,
    });
    await publish(tx, { type: 'staff.duty-changed', clinicId: actor.clinicId, id: actor.userId });
    return row;
  });
}
