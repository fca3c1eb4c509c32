import 'server-only';
import { and, eq, isNull } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { readings, resultAssignments, type Reading } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { loadPatientForPlacement, lockReading, placeReading, takeOffRecord, type PlacementPatient } from './placement';
import { splitOffLocked } from './specimens';


const mustAssign = (actor: Actor) => {
  requirePermission(actor, 'assignReadings');
};

/**
 * Puts an unassigned reading on a patient, and on one of the patient's open orders when given.
 * A reading already on a patient is a 409, never moved silently (reassignReading moves it, with a reason).
 */
export async function assignReading(
  actor: Actor,
  readingId: string,
  patientId: string,
  options: { orderId?: string; method?: 'manual' | 'suggestion' } = {},
) {
  mustAssign(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    const patient = await loadPatientForPlacement(tx, actor.clinicId, patientId);
    return assignLocked(tx, actor, reading, patient, options);
  });
}

/** assignReading's checks and placement for a reading already locked in the caller's transaction. */
export async function assignLocked(
  tx: Tx,
  actor: Actor,
  reading: Reading,
  patient: PlacementPatient,
  options: { orderId?: string; method?: 'manual' | 'suggestion'; details?: Record<string, unknown> },
) {
  if (reading.status === 'assigned') {
    throw new ApiError(409, 'already_assigned', 'This reading is already on a patient’s record.', [], {
      patientId: reading.patientId,
    });
  }
  if (reading.status === 'voided') throw new ApiError(409, 'voided', 'This reading was voided and cannot be assigned.');
  // Lab quality: a control run is never a patient result.
  if (reading.status === 'control') throw new ApiError(409, 'control_run', 'This reading is a QC control run and never goes on a patient.');
  const placed = await placeReading(tx, { clinicId: actor.clinicId, userId: actor.userId }, reading, patient, {
    orderId: options.orderId,
    method: options.method ?? 'manual',
    details: options.details,
  });
  return {
    readingId: placed.readingId,
    patientId: placed.patientId,
    assignmentId: placed.assignmentId,
    assignedAt: placed.assignedAt,
    orderId: placed.orderId,
    speciesWarning: placed.evaluation.speciesWarning,
  };
}

/**
 * Moves a result to another patient (a wrong match corrected): the current assignment ends with the
 * reason, a new one starts, in one transaction. The history keeps both.
 */
export async function reassignReading(
  actor: Actor,
  readingId: string,
  input: { patientId: string; fromPatientId: string; orderId?: string; reason: string; runWillGiveReading?: boolean },
) {
  mustAssign(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    const moved = await reassignLocked(tx, actor, reading, input);
    // Moved alone, a result of a panel leaves that panel: the rest stays together where it was.
    const split = await splitOffLocked(tx, actor, reading, 'assigned');
    return { ...moved, splitOffSpecimenId: split?.specimenId ?? null };
  });
}

/** reassignReading for a reading already locked in the caller's transaction. */
export async function reassignLocked(
  tx: Tx,
  actor: Actor,
  reading: Reading,
  input: { patientId: string; fromPatientId?: string; orderId?: string; reason: string; runWillGiveReading?: boolean; details?: Record<string, unknown> },
) {
  if (reading.status !== 'assigned' || !reading.patientId) {
    throw new ApiError(409, 'not_assigned', 'This reading is not on a patient’s record; assign it from Intake.');
  }
  // The patient the person saw when they chose to move it: 409 if it moved meanwhile.
  if (input.fromPatientId && reading.patientId !== input.fromPatientId) {
    throw new ApiError(409, 'patient_changed', 'This result has been moved since you opened it; reload and check where it is now.', [], {
      currentPatientId: reading.patientId,
    });
  }
  if (reading.patientId === input.patientId) {
    throw new ApiError(409, 'same_patient', 'The result is already on this patient.');
  }
  const fromPatientId = reading.patientId;
  const patient = await loadPatientForPlacement(tx, actor.clinicId, input.patientId);
  const ended = await takeOffRecord(tx, actor, reading, input.reason, { runWillGiveReading: input.runWillGiveReading });
  await publish(tx, { type: 'reading.reassigned', clinicId: actor.clinicId, id: reading.id, patientId: fromPatientId });
  const placed = await placeReading(
    tx,
    { clinicId: actor.clinicId, userId: actor.userId },
    { ...reading, status: 'unassigned', patientId: null },
    patient,
    {
      orderId: input.orderId,
      method: 'manual',
      action: 'reading.reassigned',
      details: { fromPatientId, endedAssignmentId: ended.id, reason: input.reason, ...input.details },
    },
  );
  return {
    readingId: placed.readingId,
    patientId: placed.patientId,
    fromPatientId,
    assignmentId: placed.assignmentId,
    orderId: placed.orderId,
    speciesWarning: placed.evaluation.speciesWarning,
  };
}

/**
 * Voids a reading (a spoiled run, a control, a duplicate slip) with a reason kept in the audit trail.
 * A reading on a patient's record is voided only when the caller says so (onRecord): it comes off the
 * record, and the ended assignment stays in the history.
 */
export async function voidReading(actor: Actor, readingId: string, reason: string, options: { onRecord?: boolean } = {}) {
  requirePermission(actor, 'voidReadings');
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    return voidLocked(tx, actor, reading, reason, options);
  });
}

/** voidReading for a reading already locked in the caller's transaction. */
export async function voidLocked(
  tx: Tx,
  actor: Actor,
  reading: Reading,
  reason: string,
  options: { onRecord?: boolean; details?: Record<string, unknown> } = {},
) {
  const readingId = reading.id;
  if (reading.status === 'voided') throw new ApiError(409, 'voided', 'This reading is already voided.');
  let details: Record<string, unknown> = { reason, ...options.details };
  if (reading.status === 'assigned') {
    if (!options.onRecord) {
      throw new ApiError(409, 'already_assigned', 'This reading is on a patient’s record; it cannot be voided from Intake.');
    }
    const ended = await takeOffRecord(tx, actor, reading, reason);
    details = { ...details, fromPatientId: ended.patientId, endedAssignmentId: ended.id };
  }
  await tx.update(readings).set({ status: 'voided', patientId: null }).where(eq(readings.id, readingId));
  // No assignment can be open now, but make the invariant explicit.
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
    details,
  });
  await publish(tx, {
    type: 'reading.voided',
    clinicId: actor.clinicId,
    id: readingId,
    ...(details.fromPatientId ? { patientId: String(details.fromPatientId) } : {}),
  });
  return { readingId, status: 'voided' as const };
}
