import 'server-only';
import { and, asc, desc, eq, isNull, sql } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { inJsonList, selectJsonRows } from '@/lib/bulk-select';
import { resultValueColumns } from '@/lib/readings/queries';
import { instruments, patients, readings, resultAlerts, resultAssignments, resultReviews, staffUsers } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { analyteContexts, intervalContexts } from './config';
import { evaluateResult } from './evaluate';
import { lockReading } from '@/lib/readings/placement';
import { qualityMarksFor } from '@/lib/quality/marks';

const mustReview = (actor: Actor) => {
  requirePermission(actor, 'reviewResults', 'Only veterinarians review results.');
};

/** A veterinarian's comment and/or "reviewed" sign-off on the result as it stands on its patient now. */
export async function reviewResult(actor: Actor, readingId: string, input: { comment?: string; reviewed: boolean }) {
  mustReview(actor);
  const database = await db();
  return database.transaction((tx) => reviewInTx(tx, actor, readingId, input));
}

/**
 * Signs off several results at once (from the Review list), each with the same optional comment, in one
 * transaction: all or none. A result that is no longer on a record or already signed off refuses the lot
 * with a 409 naming it, so the veterinarian sees the list as it is now before signing again.
 */
export async function signOffResults(actor: Actor, readingIds: string[], comment?: string) {
  mustReview(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const done = [];
    // A fixed order, so two overlapping batches lock their readings in the same order.
    for (const [index, readingId] of [...new Set(readingIds)].sort().entries()) {
      try {
        done.push(await reviewInTx(tx, actor, readingId, { comment, reviewed: true }));
      } catch (error) {
        if (error instanceof ApiError && error.status < 500) {
          throw new ApiError(error.status, error.code, `Nothing was signed off: ${error.message}`, [{ path: `readingIds.${index}`, message: error.message }], { readingId });
        }
        throw error;
      }
    }
    return { signedOff: done.map((d) => d.readingId) };
  });
}

async function reviewInTx(tx: Tx, actor: Actor, readingId: string, input: { comment?: string; reviewed: boolean }) {
  const reading = await lockReading(tx, actor, readingId);
  if (reading.status !== 'assigned') throw new ApiError(409, 'not_assigned', 'Only a result on a patient’s record can be reviewed.');
  const [assignment] = await tx
    .select()
    .from(resultAssignments)
    .where(and(eq(resultAssignments.readingId, readingId), isNull(resultAssignments.endedAt)));
  if (input.reviewed) {
    const [already] = await tx
      .select({ id: resultReviews.id })
      .from(resultReviews)
      .where(and(eq(resultReviews.assignmentId, assignment.id), eq(resultReviews.kind, 'reviewed')));
    if (already) throw new ApiError(409, 'already_reviewed', `${reading.analyte} is already signed off; add a comment instead.`);
  }
  const rows = [];
  if (input.comment) rows.push({ kind: 'comment' as const, comment: input.comment });
  if (input.reviewed) rows.push({ kind: 'reviewed' as const, comment: null });
  const inserted = await tx
    .insert(resultReviews)
    .values(rows.map((r) => ({ ...r, clinicId: actor.clinicId, readingId, assignmentId: assignment.id, reviewerId: actor.userId })))
    .returning();
  for (const row of inserted) {
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: row.kind === 'reviewed' ? 'reading.reviewed' : 'reading.commented',
      entityType: 'reading',
      entityId: readingId,
      details: { patientId: reading.patientId, assignmentId: assignment.id, reviewId: row.id, ...(row.comment ? { comment: row.comment } : {}) },
    });
  }
  await publish(tx, { type: 'review.created', clinicId: actor.clinicId, id: readingId, patientId: reading.patientId! });
  return { readingId, reviews: inserted };
}

/** Comments and sign-offs per reading for its current assignment, oldest first. */
export async function reviewsFor(clinicId: string, readingIds: string[]) {
  if (!readingIds.length) return new Map<string, { kind: string; comment: string | null; at: Date; reviewerName: string }[]>();
  const database = await db();
  const fields = {
    readingId: resultReviews.readingId,
    kind: resultReviews.kind,
    comment: resultReviews.comment,
    at: resultReviews.at,
    reviewerName: staffUsers.displayName,
  };
  // A long record has a sign-off per result: the rows come back as one JSON document.
  const rows = await selectJsonRows(database, fields, (select) =>
    select
      .from(resultReviews)
      .innerJoin(resultAssignments, and(eq(resultAssignments.id, resultReviews.assignmentId), isNull(resultAssignments.endedAt)))
      .innerJoin(staffUsers, eq(staffUsers.id, resultReviews.reviewerId))
      .where(and(eq(resultReviews.clinicId, clinicId), inJsonList(resultReviews.readingId, readingIds)))
      .orderBy(asc(resultReviews.at)),
  );
  const map = new Map<string, typeof rows>();
  for (const r of rows) map.set(r.readingId, [...(map.get(r.readingId) ?? []), r]);
  return map;
}

/** Results on patients' records that no veterinarian has signed off yet; `mine`: my patients only. */
export async function unreviewedResults(actor: Actor, mine: boolean) {
  const database = await db();
  const fields = {
    ...resultValueColumns,
    id: readings.id,
    analyte: readings.analyte,
    valueDecimals: readings.valueDecimals,
    instrumentId: readings.instrumentId,
    instrumentName: instruments.name,
    measuredAt: readings.measuredAt,
    receivedAt: readings.receivedAt,
    qualityMarks: readings.qualityMarks,
    kitLotId: readings.kitLotId,
    assignedAt: resultAssignments.assignedAt,
    patientId: patients.id,
    patientName: patients.name,
    patientRecordNumber: patients.recordNumber,
    patientSpecies: patients.species,
    attendingVetId: patients.attendingVetId,
    attendingVetName: staffUsers.displayName,
  };
  // The 200 newest come back as one JSON document (lib/bulk-select.ts).
  const rows = await selectJsonRows(database, fields, (select) =>
    select
      .from(readings)
      .innerJoin(resultAssignments, and(eq(resultAssignments.readingId, readings.id), isNull(resultAssignments.endedAt)))
      .innerJoin(patients, eq(patients.id, readings.patientId))
      .leftJoin(staffUsers, eq(staffUsers.id, patients.attendingVetId))
      .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
      .where(
        and(
          eq(resultAssignments.clinicId, actor.clinicId),
          eq(readings.clinicId, actor.clinicId),
          eq(readings.status, 'assigned'),
          // Kept by a trigger on result_reviews; the partial index makes this a range read, newest first.
          isNull(resultAssignments.reviewedAt),
          mine ? eq(patients.attendingVetId, actor.userId) : undefined,
        ),
      )
      .orderBy(desc(resultAssignments.assignedAt))
      .limit(200),
  );
  const codes = [...new Set(rows.map((r) => r.analyte))];
  const [analytes, intervals, quality] = await Promise.all([
    analyteContexts(database, actor.clinicId, codes),
    intervalContexts(database, actor.clinicId, codes),
    // The same marks, in the same words, as the chart: a result is signed off knowing its QC, kit and room.
    qualityMarksFor(database, actor.clinicId, rows),
  ]);
  return rows.map((r) => {
    const e = evaluateResult(r, { name: r.patientName, species: r.patientSpecies }, analytes.get(r.analyte), intervals);
    return {
      ...r,
      display: e.display,
      flag: e.flag,
      band: e.band,
      analyzerFlag: e.analyzerFlag,
      qualitative: e.qualitative,
      intervalOrigin: e.interval?.origin ?? null,
      decimals: analytes.get(r.analyte)?.decimals ?? 1,
      quality: quality.get(r.id) ?? [],
    };
  });
}

/** Whether this staff member is a veterinarian on duty (sees every open critical result live). */
export const seesEveryCritical = (actor: Actor) => actor.role === 'veterinarian' && actor.onDuty !== false;

/**
 * Critical-result alerts: open ones (not acknowledged, still on that patient), or all recent ones.
 * `mine: 'duty'` is the header's view: every alert for a veterinarian on duty, otherwise their own.
 */
export async function listAlerts(actor: Actor, filter: { status: 'open' | 'all'; mine: boolean | 'duty' }) {
  const mine = filter.mine === 'duty' ? !seesEveryCritical(actor) : filter.mine;
  const database = await db();
  const acknowledger = staffUsers;
  const rows = await database
    .select({
      id: resultAlerts.id,
      readingId: resultAlerts.readingId,
      patientId: resultAlerts.patientId,
      patientName: patients.name,
      patientRecordNumber: patients.recordNumber,
      recipientId: resultAlerts.recipientId,
      kind: resultAlerts.kind,
      message: resultAlerts.message,
      createdAt: resultAlerts.createdAt,
      acknowledgedAt: resultAlerts.acknowledgedAt,
      acknowledgedByName: acknowledger.displayName,
      acknowledgeNote: resultAlerts.acknowledgeNote,
      withdrawnAt: resultAlerts.withdrawnAt,
      escalatedAt: resultAlerts.escalatedAt,
    })
    .from(resultAlerts)
    .innerJoin(patients, eq(patients.id, resultAlerts.patientId))
    .leftJoin(acknowledger, eq(acknowledger.id, resultAlerts.acknowledgedBy))
    .where(
      and(
        eq(resultAlerts.clinicId, actor.clinicId),
        filter.status === 'open' ? and(isNull(resultAlerts.acknowledgedAt), isNull(resultAlerts.withdrawnAt)) : undefined,
        // "Mine": for me, or for nobody in particular (the patient had no attending veterinarian).
        mine ? sql`(${resultAlerts.recipientId} = ${actor.userId} or ${resultAlerts.recipientId} is null)` : undefined,
      ),
    )
    .orderBy(desc(resultAlerts.createdAt))
    .limit(200);
  return rows;
}
export type AlertView = Awaited<ReturnType<typeof listAlerts>>[number];

export async function acknowledgeAlert(actor: Actor, alertId: string, note?: string) {
  mustReview(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [alert] = await tx
      .select()
      .from(resultAlerts)
      .where(and(eq(resultAlerts.id, alertId), eq(resultAlerts.clinicId, actor.clinicId)))
      .for('update');
    if (!alert) throw notFound('The alert');
    if (alert.acknowledgedAt) throw new ApiError(409, 'already_acknowledged', 'This alert was already acknowledged.');
    if (alert.withdrawnAt) throw new ApiError(409, 'withdrawn', 'This result has left that patient’s record; the alert no longer applies.');
    const [row] = await tx
      .update(resultAlerts)
      .set({ acknowledgedAt: new Date(), acknowledgedBy: actor.userId, acknowledgeNote: note ?? null })
      .where(eq(resultAlerts.id, alertId))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'alert.acknowledged',
      entityType: 'alert',
      entityId: alertId,
      details: { readingId: alert.readingId, ...(note ? { note } : {}) },
    });
    // Also on the reading's own history, so the chart shows who acknowledged the critical value.
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'reading.critical-acknowledged',
      entityType: 'reading',
      entityId: alert.readingId,
      details: { alertId, ...(note ? { note } : {}) },
    });
    await publish(tx, { type: 'alert.acknowledged', clinicId: actor.clinicId, id: alertId, patientId: alert.patientId });
    return row;
  });
}
