import 'server-only';
import { and, desc, eq } from 'drizzle-orm';
import { db } from '@/db/client';
import { outboundMail, resultReports, staffUsers } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { CLINICAL_CAUTION_TEXT } from '@/lib/format';
import { ApiError } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { escapeHtml } from '@/lib/mail/compose';
import { enqueueMail } from '@/lib/mail/queue';
import type { SendReportInput } from '@/lib/validation/reports';
import { reportData, type ReportData } from './data';
import { renderReportPdf } from './pdf';

export const reportFileName = (data: Pick<ReportData, 'patient' | 'visitDate'>) =>
  `results-${data.patient.recordNumber.replace(/[^A-Za-z0-9-]+/g, '_')}-${data.visitDate}.pdf`;

/** The e-mail that carries a report: the same content as HTML and plain text, the PDF attached. */
export function reportMessage(data: ReportData, input: { recipientName?: string; message?: string }, sender: string) {
  const greeting = input.recipientName ? `Dear ${input.recipientName},` : 'Hello,';
  const subject = `Laboratory results for ${data.patient.name} (${data.patient.recordNumber}), ${data.visitDate}`;
  const lines = data.results.map((r) => `- ${r.name}: ${r.value}${r.unit ? ` ${r.unit}` : ''} (interval ${r.interval})${r.flag && r.flag !== 'N' ? ` [${r.flag}]` : ''}`);
  const text = [
    greeting,
    '',
    `Please find attached the laboratory results for ${data.patient.name} from ${data.clinic.name}, visit of ${data.visitDate}.`,
    ...(input.message ? ['', input.message] : []),
    '',
    ...lines,
    '',
    `Reviewed and sent by ${sender}.`,
    '',
    CLINICAL_CAUTION_TEXT,
  ].join('\n');
  const rows = data.results
    .map(
      (r) =>
        `<tr><td style="padding:4px 8px">${escapeHtml(r.name)}</td><td style="padding:4px 8px;font-family:monospace">${escapeHtml(r.value)} ${escapeHtml(r.unit ?? '')}</td><td style="padding:4px 8px;font-family:monospace">${escapeHtml(r.interval)}</td><td style="padding:4px 8px;font-weight:bold;color:${r.flag && r.flag !== 'N' ? '#a52a2a' : '#13283a'}">${escapeHtml(r.flag ?? '—')}</td></tr>`,
    )
    .join('');
  const html = `<div style="font-family:sans-serif;color:#13283a">
<p>${escapeHtml(greeting)}</p>
<p>Please find attached the laboratory results for <strong>${escapeHtml(data.patient.name)}</strong> from ${escapeHtml(data.clinic.name)}, visit of ${escapeHtml(data.visitDate)}.</p>
${input.message ? `<p>${escapeHtml(input.message).replace(/\n/g, '<br>')}</p>` : ''}
<table style="border-collapse:collapse;font-size:14px"><thead><tr><th align="left" style="padding:4px 8px">Test</th><th align="left" style="padding:4px 8px">Result</th><th align="left" style="padding:4px 8px">Interval</th><th align="left" style="padding:4px 8px">Flag</th></tr></thead><tbody>${rows}</tbody></table>
<p>Reviewed and sent by ${escapeHtml(sender)}.</p>
<p style="font-size:12px;color:#4d7391">${escapeHtml(CLINICAL_CAUTION_TEXT)}</p>
</div>`;
  return { subject, text, html };
}

/**
 * A veterinarian sends a reviewed report (every result of the visit signed off) to the owner or a
 * referring veterinarian: PDF rendered now, mail queued, report recorded, audited, in one transaction.
 */
export async function sendReport(actor: Actor, patientId: string, input: SendReportInput) {
  requirePermission(actor, 'reviewResults', 'Only veterinarians send result reports.');
  const data = await reportData(actor, patientId, input.visitDate);
  if (!data.reviewed) {
    throw new ApiError(409, 'not_reviewed', 'Sign off every result of this visit before sending the report.');
  }
  const recipientEmail = input.recipientKind === 'owner' ? (input.recipientEmail ?? data.patient.ownerEmail ?? undefined) : input.recipientEmail;
  if (!recipientEmail) {
    throw new ApiError(400, 'no_recipient', 'Give the recipient’s e-mail address (no owner e-mail is on record).', [{ path: 'recipientEmail', message: 'Required.' }]);
  }
  const pdf = await renderReportPdf(data);
  const message = reportMessage(data, input, actor.displayName);
  const database = await db();
  return database.transaction(async (tx) => {
    const mail = await enqueueMail(tx, {
      clinicId: actor.clinicId,
      purpose: 'report',
      to: [recipientEmail],
      ...message,
      attachments: [{ filename: reportFileName(data), contentType: 'application/pdf', contentBase64: pdf.toString('base64') }],
      patientId,
      createdBy: actor.userId,
    });
    const [report] = await tx
      .insert(resultReports)
      .values({
        clinicId: actor.clinicId,
        patientId,
        visitDate: data.visitDate,
        readingIds: data.results.map((r) => r.id),
        recipientKind: input.recipientKind,
        recipientName: input.recipientName ?? null,
        recipientEmail,
        message: input.message ?? null,
        mailId: mail.id,
        sentBy: actor.userId,
      })
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'report.sent',
      entityType: 'patient',
      entityId: patientId,
      details: { reportId: report.id, visitDate: data.visitDate, to: recipientEmail, recipientKind: input.recipientKind, readingIds: report.readingIds, mailId: mail.id },
    });
    await publish(tx, { type: 'report.sent', clinicId: actor.clinicId, id: report.id, patientId });
    return { report, mail: { id: mail.id, status: mail.status } };
  });
}

/** Reports sent for a patient, newest first, with each one's delivery state. */
export async function patientReports(actor: Actor, patientId: string) {
  const database = await db();
  return database
    .select({
      id: resultReports.id,
      visitDate: resultReports.visitDate,
      recipientKind: resultReports.recipientKind,
      recipientName: resultReports.recipientName,
      recipientEmail: resultReports.recipientEmail,
      createdAt: resultReports.createdAt,
      sentByName: staffUsers.displayName,
      mailStatus: outboundMail.status,
      mailAttempts: outboundMail.attempts,
      mailLastError: outboundMail.lastError,
      mailSentAt: outboundMail.sentAt,
      mailNextAttemptAt: outboundMail.nextAttemptAt,
    })
    .from(resultReports)
    .innerJoin(outboundMail, eq(outboundMail.id, resultReports.mailId))
    .innerJoin(staffUsers, eq(staffUsers.id, resultReports.sentBy))
    .where(and(eq(resultReports.clinicId, actor.clinicId), eq(resultReports.patientId, patientId)))
    .orderBy(desc(resultReports.createdAt))
    .limit(100);
}

