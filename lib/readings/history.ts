import 'server-only';
import { and, desc, eq, inArray, isNotNull, isNull, ne, or } from 'drizzle-orm';
import { alias } from 'drizzle-orm/pg-core';
import { db } from '@/db/client';
import { instruments, patients, readings, resultAlerts, resultAssignments, resultReviews, staffUsers } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';

/**
 * Results that were on this patient's record and left it (moved to another patient, voided, or sent back
 * to Intake): each stays on the chart it left as a struck-through entry with who took it off, when and
 * why, and the comments and sign-off written while it was here. A result that came back to this patient
 * is listed as current instead.
 */
export async function resultsTakenOff(actor: Actor, patientId: string) {
  const database = await db();
  const [patient] = await database
    .select({ id: patients.id })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  const endedBy = alias(staffUsers, 'ended_by');
  const now = alias(resultAssignments, 'now_on');
  const nowPatient = alias(patients, 'now_patient');
  const rows = await database
    .select({
      assignmentId: resultAssignments.id,
      readingId: readings.id,
      analyte: readings.analyte,
      value: readings.value,
      comparator: readings.comparator,
      unit: readings.unit,
      measuredAt: readings.measuredAt,
      receivedAt: readings.receivedAt,
      instrumentName: instruments.name,
      instrumentCode: readings.instrumentCode,
      assignedAt: resultAssignments.assignedAt,
      endedAt: resultAssignments.endedAt,
      endedByName: endedBy.displayName,
      endReason: resultAssignments.endReason,
      readingStatus: readings.status,
      nowPatientId: nowPatient.id,
      nowPatientRecordNumber: nowPatient.recordNumber,
    })
    .from(resultAssignments)
    .innerJoin(readings, eq(readings.id, resultAssignments.readingId))
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(endedBy, eq(endedBy.id, resultAssignments.endedBy))
    .leftJoin(now, and(eq(now.readingId, readings.id), isNull(now.endedAt)))
    .leftJoin(nowPatient, eq(nowPatient.id, now.patientId))
    .where(
      and(
        eq(resultAssignments.clinicId, actor.clinicId),
        eq(resultAssignments.patientId, patientId),
        isNotNull(resultAssignments.endedAt),
        // Back on this patient: shown as a current result, its history in the result's detail.
        or(isNull(readings.patientId), ne(readings.patientId, patientId)),
      ),
    )
    .orderBy(desc(resultAssignments.endedAt));
  // Several ended stays of one reading on this patient: the latest one tells the story.
  const seen = new Set<string>();
  const latest = rows.filter((r) => (seen.has(r.readingId) ? false : (seen.add(r.readingId), true)));
  const reviews = latest.length
    ? await database
        .select({ assignmentId: resultReviews.assignmentId, kind: resultReviews.kind, comment: resultReviews.comment, at: resultReviews.at, by: staffUsers.displayName })
        .from(resultReviews)
        .innerJoin(staffUsers, eq(staffUsers.id, resultReviews.reviewerId))
        .where(inArray(resultReviews.assignmentId, latest.map((r) => r.assignmentId)))
        .orderBy(resultReviews.at)
    : [];
  return latest.map((r) => {
    const mine = reviews.filter((x) => x.assignmentId === r.assignmentId);
    const signoff = mine.find((x) => x.kind === 'reviewed');
    return {
      ...r,
      outcome: r.readingStatus === 'voided' ? ('voided' as const) : r.nowPatientId ? ('moved' as const) : ('unassigned' as const),
      reviewed: signoff ? { by: signoff.by, at: signoff.at } : null,
      comments: mine.filter((x) => x.kind === 'comment').map((x) => ({ by: x.by, at: x.at, comment: x.comment })),
    };
  });
}
export type TakenOffResult = Awaited<ReturnType<typeof resultsTakenOff>>[number];

const REVIEW_ACTIONS = new Set(['reading.reviewed', 'reading.commented', 'reading.critical-acknowledged']);

/**
 * A reading's history as seen from one patient's chart: moves and voids stay visible, but comments,
 * sign-offs and critical acknowledgements written for another patient (an earlier or later assignment)
 * are left out, since they were about that animal.
 */
export async function historyForPatient<H extends { action: string; details: Record<string, unknown> }>(
  clinicId: string,
  readingId: string,
  patientId: string,
  history: H[],
): Promise<H[]> {
  if (!history.some((h) => REVIEW_ACTIONS.has(h.action))) return history;
  const database = await db();
  const [assignments, alerts] = await Promise.all([
    database
      .select({ id: resultAssignments.id })
      .from(resultAssignments)
      .where(and(eq(resultAssignments.clinicId, clinicId), eq(resultAssignments.readingId, readingId), eq(resultAssignments.patientId, patientId))),
    database
      .select({ id: resultAlerts.id, assignmentId: resultAlerts.assignmentId })
      .from(resultAlerts)
      .where(and(eq(resultAlerts.clinicId, clinicId), eq(resultAlerts.readingId, readingId))),
  ]);
  const here = new Set(assignments.map((a) => a.id));
  const alertAssignment = new Map(alerts.map((a) => [a.id, a.assignmentId]));
  return history.filter((h) => {
    if (!REVIEW_ACTIONS.has(h.action)) return true;
    const assignmentId = typeof h.details.assignmentId === 'string' ? h.details.assignmentId : alertAssignment.get(String(h.details.alertId));
    return assignmentId !== undefined && here.has(assignmentId);
  });
}
