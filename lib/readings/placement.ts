import 'server-only';
import { and, desc, eq, isNull, ne } from 'drizzle-orm';
import type { Tx } from '@/db/client';
import { labOrders, patients, readings, resultAlerts, resultAssignments, type Reading } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { analyteContexts, intervalContexts } from '@/lib/clinical/config';
import { evaluateResult, formatMeasured } from '@/lib/clinical/evaluate';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';

/** Who puts a reading on a patient: a staff member, or (opt-in exact-ID rule only) a bridge's upload. */
export type PlacedBy = { clinicId: string; userId: string; bridgeId?: null } | { clinicId: string; userId: null; bridgeId: string };

export type PlacementMethod = 'manual' | 'suggestion' | 'auto-sample-id';

export async function loadPatientForPlacement(tx: Tx, clinicId: string, patientId: string) {
  const [patient] = await tx
    .select({
      id: patients.id,
      name: patients.name,
      recordNumber: patients.recordNumber,
      species: patients.species,
      active: patients.active,
      attendingVetId: patients.attendingVetId,
    })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, clinicId)))
    // Held until commit, so a merge or closing of this record waits for the placement (and then sees it).
    .for('share');
  if (!patient) throw notFound('The patient');
  if (!patient.active) throw new ApiError(409, 'patient_inactive', 'This patient’s record is closed.');
  return patient;
}
export type PlacementPatient = Awaited<ReturnType<typeof loadPatientForPlacement>>;

/** Checks and claims an open order for this reading; 409 when it is taken, closed or for something else. */
async function claimOrder(tx: Tx, clinicId: string, orderId: string, reading: Reading, patient: PlacementPatient) {
  const [order] = await tx
    .select()
    .from(labOrders)
    .where(and(eq(labOrders.id, orderId), eq(labOrders.clinicId, clinicId)))
    .for('update');
  if (!order) throw notFound('The order');
  if (order.patientId !== patient.id) throw new ApiError(409, 'order_patient_mismatch', 'That test was started for another patient.');
  if (order.analyte !== reading.analyte) {
    throw new ApiError(409, 'order_analyte_mismatch', `That test is ${order.analyte}; this reading is ${reading.analyte}.`);
  }
  if (order.status === 'fulfilled') {
    throw new ApiError(409, 'order_fulfilled', 'That test already has its reading; one test takes one reading.', [], {
      readingId: order.fulfilledReadingId,
    });
  }
  if (order.status !== 'open') throw new ApiError(409, 'order_closed', `That test was ${order.status}.`);
  const now = new Date();
  const claimed = await tx
    .update(labOrders)
    .set({ status: 'fulfilled', fulfilledReadingId: reading.id, fulfilledAt: now, testConsumed: true })
    .where(and(eq(labOrders.id, orderId), eq(labOrders.status, 'open')))
    .returning({ id: labOrders.id });
  if (!claimed.length) throw new ApiError(409, 'order_fulfilled', 'That test already has its reading.');
  return order;
}

/**
 * Puts a reading (already locked, not on anyone) on a patient, optionally fulfilling one of the patient's
 * open orders, in the caller's transaction: assignment row, reading, order, audit, live event, and a
 * critical-result alert for the attending veterinarian when the result is critical.
 */
export async function placeReading(
  tx: Tx,
  by: PlacedBy,
  reading: Reading,
  patient: PlacementPatient,
  options: { orderId?: string | null; method: PlacementMethod; action?: 'reading.assigned' | 'reading.reassigned'; details?: Record<string, unknown> },
) {
  const clinicId = by.clinicId;
  const order = options.orderId ? await claimOrder(tx, clinicId, options.orderId, reading, patient) : null;
  const [assignment] = await tx
    .insert(resultAssignments)
    .values({ clinicId, readingId: reading.id, patientId: patient.id, assignedBy: by.userId, method: options.method, orderId: order?.id ?? null })
    .returning();
  await tx
    .update(readings)
    .set({ status: 'assigned', patientId: patient.id })
    .where(and(eq(readings.id, reading.id), ne(readings.status, 'voided')));

  const analytes = await analyteContexts(tx, clinicId, [reading.analyte]);
  const intervals = await intervalContexts(tx, clinicId, [reading.analyte]);
  const evaluation = evaluateResult(reading, patient, analytes.get(reading.analyte), intervals);

  const audit = { clinicId, actorUserId: by.userId, actorBridgeId: by.bridgeId ?? null };
  await recordAudit(tx, {
    ...audit,
    action: options.action ?? 'reading.assigned',
    entityType: 'reading',
    entityId: reading.id,
    details: {
      patientId: patient.id,
      recordNumber: patient.recordNumber,
      assignmentId: assignment.id,
      method: options.method,
      ...(order ? { orderId: order.id } : {}),
      ...(evaluation.speciesWarning ? { speciesWarning: evaluation.speciesWarning } : {}),
      ...options.details,
    },
  });
  if (order) {
    await recordAudit(tx, { ...audit, action: 'order.fulfilled', entityType: 'order', entityId: order.id, details: { readingId: reading.id } });
    await publish(tx, { type: 'order.updated', clinicId, id: order.id, patientId: patient.id });
  }

  if (evaluation.flag && evaluation.flag.critical !== 'no' && evaluation.interval) {
    const kind = evaluation.flag.flag === 'critical-low' ? 'critical-low' : 'critical-high';
    const threshold = (kind === 'critical-low' ? evaluation.interval.criticalLow : evaluation.interval.criticalHigh)!;
    const certainty = evaluation.flag.critical === 'possible' ? 'possibly ' : '';
    const message = `${reading.analyte} ${formatMeasured(evaluation.display, analytes.get(reading.analyte)?.decimals ?? 1)} for ${patient.name} (${patient.recordNumber}): ${certainty}${kind === 'critical-low' ? 'below' : 'above'} the critical limit ${threshold} ${evaluation.interval.unit}.`;
    const [alert] = await tx
      .insert(resultAlerts)
      .values({
        clinicId,
        readingId: reading.id,
        assignmentId: assignment.id,
        patientId: patient.id,
        recipientId: patient.attendingVetId,
        kind,
        message,
        threshold,
        unit: evaluation.interval.unit,
      })
      .returning();
    await recordAudit(tx, { ...audit, action: 'alert.raised', entityType: 'alert', entityId: alert.id, details: { readingId: reading.id, message } });
    await publish(tx, { type: 'alert.created', clinicId, id: alert.id, patientId: patient.id, ...(patient.attendingVetId ? { userId: patient.attendingVetId } : {}) });
  }

  await publish(tx, { type: options.action ?? 'reading.assigned', clinicId, id: reading.id, patientId: patient.id });
  return { readingId: reading.id, patientId: patient.id, assignmentId: assignment.id, assignedAt: assignment.assignedAt, orderId: order?.id ?? null, evaluation };
}

/**
 * Takes a reading off its current patient in the caller's transaction: ends the assignment with the
 * reason, withdraws its unacknowledged alerts, and closes the run it fulfilled: that run is over, so it
 * stays closed (as used, no reading) unless the technician says it will still give a reading
 * (`runWillGiveReading`), when it reopens and waits on the Bench again. Returns the ended row.
 */
export async function takeOffRecord(
  tx: Tx,
  actor: { clinicId: string; userId: string },
  reading: Reading,
  reason: string,
  options: { runWillGiveReading?: boolean } = {},
) {
  const now = new Date();
  const [current] = await tx
    .select()
    .from(resultAssignments)
    .where(and(eq(resultAssignments.readingId, reading.id), isNull(resultAssignments.endedAt)))
    .orderBy(desc(resultAssignments.assignedAt))
    .for('update');
  if (!current) throw new ApiError(409, 'not_assigned', 'This reading is not on a patient’s record.');
  await tx
    .update(resultAssignments)
    .set({ endedAt: now, endedBy: actor.userId, endReason: reason })
    .where(eq(resultAssignments.id, current.id));
  const reopen = options.runWillGiveReading === true;
  const released = await tx
    .update(labOrders)
    .set(
      reopen
        ? { status: 'open', fulfilledReadingId: null, fulfilledAt: null, testConsumed: false }
        : {
            status: 'aborted',
            fulfilledReadingId: null,
            fulfilledAt: null,
            testConsumed: true,
            closedBy: actor.userId,
            closedAt: now,
            closeReason: `Its reading was moved off (${reason}); the run is over and gives no other reading.`,
          },
    )
    .where(and(eq(labOrders.clinicId, actor.clinicId), eq(labOrders.fulfilledReadingId, reading.id)))
    .returning({ id: labOrders.id, patientId: labOrders.patientId });
  for (const order of released) {
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: reopen ? 'order.reopened' : 'order.closed',
      entityType: 'order',
      entityId: order.id,
      details: { readingId: reading.id, reason, ...(reopen ? { runWillGiveReading: true } : { outcome: 'aborted', testConsumed: true }) },
    });
    await publish(tx, { type: 'order.updated', clinicId: actor.clinicId, id: order.id, patientId: order.patientId });
  }
  const withdrawn = await tx
    .update(resultAlerts)
    .set({ withdrawnAt: now })
    .where(and(eq(resultAlerts.assignmentId, current.id), isNull(resultAlerts.withdrawnAt)))
    .returning({ id: resultAlerts.id });
  for (const alert of withdrawn) {
    await publish(tx, { type: 'alert.acknowledged', clinicId: actor.clinicId, id: alert.id, patientId: current.patientId });
  }
  await tx.update(readings).set({ status: 'unassigned', patientId: null }).where(eq(readings.id, reading.id));
  return current;
}

/** Loads one of the clinic's readings and locks its row for the rest of the transaction; 404 if not the clinic's. */
export async function lockReading(tx: Tx, actor: { clinicId: string }, readingId: string) {
  const [reading] = await tx
    .select()
    .from(readings)
    .where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId)))
    .for('update');
  if (!reading) throw notFound('The reading');
  return reading;
}
