import 'server-only';
import { and, eq, isNull } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { patients, readings, resultAssignments } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { allowed } from '@/lib/auth/roles';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';

async function lockReading(tx: Tx, actor: Actor, readingId: string) {
  const [reading] = await tx
    .select()
    .from(readings)
    .where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId)))
    .for('update');
  if (!reading) throw notFound('The reading');
  return reading;
}

/** Puts an unassigned reading on a patient. A reading already on a patient is a 409, never moved silently. */
export async function assignReading(actor: Actor, readingId: string, patientId: string) {
  if (!allowed(actor.role, 'assignReadings')) throw new ApiError(403, 'forbidden', 'Your role does not allow this.');
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    if (reading.status === 'assigned') {
      throw new ApiError(409, 'already_assigned', 'This reading is already on a patient’s record.', [], {
        patientId: reading.patientId,
      });
    }
    if (reading.status === 'voided') throw new ApiError(409, 'voided', 'This reading was voided and cannot be assigned.');

    const [patient] = await tx
      .select({ id: patients.id, name: patients.name, recordNumber: patients.recordNumber, active: patients.active })
      .from(patients)
      .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
    if (!patient) throw notFound('The patient');
    if (!patient.active) throw new ApiError(409, 'patient_inactive', 'This patient’s record is closed.');

    const [assignment] = await tx
      .insert(resultAssignments)
      .values({ clinicId: actor.clinicId, readingId, patientId, assignedBy: actor.userId, method: 'manual' })
      .returning();
    await tx
      .update(readings)
      .set({ status: 'assigned', patientId })
      .where(and(eq(readings.id, readingId), eq(readings.status, 'unassigned')));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'reading.assigned',
      entityType: 'reading',
      entityId: readingId,
      details: { patientId, recordNumber: patient.recordNumber, assignmentId: assignment.id, method: 'manual' },
    });
    await publish(tx, { type: 'reading.assigned', clinicId: actor.clinicId, id: readingId, patientId });
    return { readingId, patientId, assignmentId: assignment.id, assignedAt: assignment.assignedAt };
  });
}

/** Voids an unassigned reading (a spoiled run, a control, a duplicate slip) with a reason kept in the audit trail. */
export async function voidReading(actor: Actor, readingId: string, reason: string) {
  if (!allowed(actor.role, 'voidReadings')) throw new ApiError(403, 'forbidden', 'Your role does not allow this.');
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    if (reading.status === 'voided') throw new ApiError(409, 'voided', 'This reading is already voided.');
    if (reading.status === 'assigned') {
      throw new ApiError(409, 'already_assigned', 'This reading is on a patient’s record; it cannot be voided from Intake.');
    }
    await tx.update(readings).set({ status: 'voided' }).where(eq(readings.id, readingId));
    // No assignment can be open on an unassigned reading, but make the invariant explicit.
    await tx
      .update(resultAssignments)
      .set({ endedAt: new Date(), endedBy: actor.userId, endReason: reason })
      .where(and(eq(resultAssignments.readingId, readingId), isNull(resultAssignments.endedAt)));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'reading.voided',
      entityType: 'reading',
      entityId: readingId,
      details: { reason },
    });
    await publish(tx, { type: 'reading.voided', clinicId: actor.clinicId, id: readingId });
    return { readingId, status: 'voided' as const };
  });
}
