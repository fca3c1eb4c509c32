import 'server-only';
import { aliasedTable, and, asc, desc, eq, inArray } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { analyteSettings, instruments, labOrders, patients, runProtocols, staffUsers, type StaffRole } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { allowed } from '@/lib/auth/roles';
import { recordAudit } from '@/lib/audit';
import { protocolFor } from '@/lib/clinical/config';
import { dueAt } from '@/lib/clinical/protocols';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { loadedLot } from '@/lib/quality/store';
import type { NewOrderInput, NewPanelInput } from '@/lib/validation/clinical';

// Starting and closing tests is bench work: technicians and veterinarians (the brief), not administrators.
const RUNS_TESTS: readonly StaffRole[] = ['technician', 'veterinarian'];
const mustRun = (actor: Actor) => {
  if (!allowed(actor.role, 'assignReadings') || !RUNS_TESTS.includes(actor.role)) {
    throw new ApiError(403, 'forbidden', 'Only technicians and veterinarians start or close tests.');
  }
};

/** Clock skew between the lab PC and the server is allowed this much when a start time is "now". */
const FUTURE_SLACK_MS = 60_000;
/** A run started this long ago is not a bench run any more: refuse rather than invent a due time. */
const MAX_PAST_MS = 24 * 3_600_000;

/** The run's start time, checked: the past within a day, the future only within clock skew. */
function startTime(input: { startedAt?: string }, now: Date): Date {
  const startedAt = input.startedAt ? new Date(input.startedAt) : now;
  if (startedAt.getTime() > now.getTime() + FUTURE_SLACK_MS) {
    throw new ApiError(400, 'invalid_request', 'The start time is in the future.', [{ path: 'startedAt', message: 'The start time is in the future.' }]);
  }
  if (now.getTime() - startedAt.getTime() > MAX_PAST_MS) {
    throw new ApiError(400, 'invalid_request', 'The start time is more than a day ago.', [{ path: 'startedAt', message: 'The start time is more than a day ago.' }]);
  }
  return startedAt;
}

/** Starts a test for a patient: the due time comes from the protocol's stages, which the order keeps a copy of. */
export async function startOrder(actor: Actor, input: NewOrderInput, now = new Date()) {
  mustRun(actor);
  const startedAt = startTime(input, now);
  const database = await db();
  return database.transaction((tx) => startOrderIn(tx, actor, input, startedAt));
}

/**
 * Starts a reader's whole panel on one sample: every test starts, or none does (one transaction). A test
 * that cannot start names itself in the error (its path is `analytes.<index>`), and nothing is left running.
 */
export async function startPanel(actor: Actor, input: NewPanelInput, now = new Date()) {
  mustRun(actor);
  const startedAt = startTime(input, now);
  const database = await db();
  return database.transaction(async (tx) => {
    const orders = [];
    for (const [index, analyte] of input.analytes.entries()) {
      try {
        orders.push(await startOrderIn(tx, actor, { ...input, analyte }, startedAt));
      } catch (error) {
        if (!(error instanceof ApiError)) throw error;
        const message = `${analyte} could not start, so no test of the panel was started: ${error.message}`;
        throw new ApiError(error.status, error.code, message, [{ path: `analytes.${index}`, message }], { analyte });
      }
    }
    return orders;
  });
}

async function startOrderIn(tx: Tx, actor: Actor, input: NewOrderInput, startedAt: Date) {
  const [patient] = await tx
    .select({ id: patients.id, active: patients.active, name: patients.name, recordNumber: patients.recordNumber })
    .from(patients)
    .where(and(eq(patients.id, input.patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  if (!patient.active) throw new ApiError(409, 'patient_inactive', 'This patient’s record is closed.');
  const [orderer] = await tx
    .select({ id: staffUsers.id, active: staffUsers.active })
    .from(staffUsers)
    .where(and(eq(staffUsers.id, input.orderedBy), eq(staffUsers.clinicId, actor.clinicId)));
  if (!orderer || !orderer.active) throw notFound('The staff member who ordered the test');
  if (input.instrumentId) {
    const [instrument] = await tx
      .select({ id: instruments.id, analytes: instruments.analytes, name: instruments.name })
      .from(instruments)
      .where(and(eq(instruments.id, input.instrumentId), eq(instruments.clinicId, actor.clinicId), eq(instruments.active, true)));
    if (!instrument) throw notFound('The instrument');
    if (!instrument.analytes.includes(input.analyte)) {
      const message = `${instrument.name} does not run ${input.analyte}.`;
      throw new ApiError(400, 'invalid_request', message, [{ path: 'analyte', message }]);
    }
  }
  const protocol = await protocolFor(tx, actor.clinicId, input.analyte, input.instrumentId ?? null);
  if (!protocol) {
    throw new ApiError(409, 'no_protocol', `There is no run protocol for ${input.analyte}; an administrator can add one in Admin.`);
  }
  // Lab quality: the lot loaded for this test, so an aborted run still counts against it.
  const lot = await loadedLot(tx, actor.clinicId, input.instrumentId ?? null, input.analyte);
  const [order] = await tx
    .insert(labOrders)
    .values({
      clinicId: actor.clinicId,
      patientId: patient.id,
      analyte: input.analyte,
      instrumentId: input.instrumentId ?? null,
      sampleType: input.sampleType,
      sampleId: input.sampleId ?? null,
      kitLot: input.kitLot ?? lot?.lotNumber ?? null,
      kitLotId: lot?.id ?? null,
      orderedBy: orderer.id,
      startedBy: actor.userId,
      startedAt,
      dueAt: dueAt(startedAt, protocol.stages),
      protocolId: protocol.id,
      stages: protocol.stages,
      note: input.note ?? null,
    })
    .returning();
  await recordAudit(tx, {
    clinicId: actor.clinicId,
    actorUserId: actor.userId,
    action: 'order.started',
    entityType: 'order',
    entityId: order.id,
    details: { patientId: patient.id, recordNumber: patient.recordNumber, analyte: order.analyte, startedAt: order.startedAt, dueAt: order.dueAt, protocolId: protocol.id },
  });
  await publish(tx, { type: 'order.created', clinicId: actor.clinicId, id: order.id, patientId: patient.id });
  return order;
}

/**
 * Closes an open test without a reading. 'aborted': the run failed on the bench (re-insertion missed,
 * an error on the reader), and the test is used up. 'cancelled': it never ran.
 */
export async function closeOrder(actor: Actor, orderId: string, outcome: 'aborted' | 'cancelled', reason: string) {
  mustRun(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [order] = await tx
      .select()
      .from(labOrders)
      .where(and(eq(labOrders.id, orderId), eq(labOrders.clinicId, actor.clinicId)))
      .for('update');
    if (!order) throw notFound('The test');
    if (order.status !== 'open') throw new ApiError(409, 'order_closed', `This test is already ${order.status}.`);
    const [row] = await tx
      .update(labOrders)
      .set({ status: outcome, testConsumed: outcome === 'aborted', closedBy: actor.userId, closedAt: new Date(), closeReason: reason })
      .where(eq(labOrders.id, orderId))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: `order.${outcome}`,
      entityType: 'order',
      entityId: orderId,
      details: { reason, testConsumed: outcome === 'aborted' },
    });
    await publish(tx, { type: 'order.updated', clinicId: actor.clinicId, id: orderId, patientId: order.patientId });
    return row;
  });
}

const orderedByUser = aliasedTable(staffUsers, 'ordered_by_user');
const startedByUser = aliasedTable(staffUsers, 'started_by_user');

/** Tests on the bench (open), or a patient's tests; with patient, instrument and people by name. */
export async function listOrders(actor: Actor, filter: { status: 'open' | 'all'; patientId?: string }) {
  const database = await db();
  const conditions = [eq(labOrders.clinicId, actor.clinicId)];
  if (filter.status === 'open') conditions.push(eq(labOrders.status, 'open'));
  if (filter.patientId) conditions.push(eq(labOrders.patientId, filter.patientId));
  const rows = await database
    .select({
      id: labOrders.id,
      status: labOrders.status,
      analyte: labOrders.analyte,
      sampleType: labOrders.sampleType,
      sampleId: labOrders.sampleId,
      startedAt: labOrders.startedAt,
      dueAt: labOrders.dueAt,
      stages: labOrders.stages,
      fulfilledReadingId: labOrders.fulfilledReadingId,
      closeReason: labOrders.closeReason,
      testConsumed: labOrders.testConsumed,
      patientId: labOrders.patientId,
      patientName: patients.name,
      patientRecordNumber: patients.recordNumber,
      patientSpecies: patients.species,
      instrumentId: labOrders.instrumentId,
      instrumentName: instruments.name,
      orderedByName: orderedByUser.displayName,
      startedByName: startedByUser.displayName,
      lateSeconds: runProtocols.lateSeconds,
      earlySeconds: runProtocols.earlySeconds,
    })
    .from(labOrders)
    .innerJoin(patients, eq(patients.id, labOrders.patientId))
    .leftJoin(instruments, eq(instruments.id, labOrders.instrumentId))
    .leftJoin(orderedByUser, eq(orderedByUser.id, labOrders.orderedBy))
    .leftJoin(startedByUser, eq(startedByUser.id, labOrders.startedBy))
    .leftJoin(runProtocols, eq(runProtocols.id, labOrders.protocolId))
    .where(and(...conditions))
    .orderBy(filter.status === 'open' ? asc(labOrders.dueAt) : desc(labOrders.startedAt))
    .limit(200);
  return rows;
}
export type OrderView = Awaited<ReturnType<typeof listOrders>>[number];

/** What the start-a-test form offers: analytes with a protocol, instruments that run them, who may order. */
export async function orderFormOptions(actor: Actor) {
  const database = await db();
  const [protocols, instrumentRows, staff, analyteRows] = await Promise.all([
    database.select().from(runProtocols).where(eq(runProtocols.clinicId, actor.clinicId)),
    database
      .select({ id: instruments.id, name: instruments.name, analytes: instruments.analytes, channels: instruments.channels })
      .from(instruments)
      .where(and(eq(instruments.clinicId, actor.clinicId), eq(instruments.active, true))),
    database
      .select({ id: staffUsers.id, displayName: staffUsers.displayName, role: staffUsers.role })
      .from(staffUsers)
      .where(and(eq(staffUsers.clinicId, actor.clinicId), eq(staffUsers.active, true), inArray(staffUsers.role, ['veterinarian', 'technician']))),
    database
      .select({ code: analyteSettings.code, validatedSpecies: analyteSettings.validatedSpecies })
      .from(analyteSettings)
      .where(eq(analyteSettings.clinicId, actor.clinicId)),
  ]);
  const analytes = [...new Set(protocols.map((p) => p.analyte))].sort();
  return {
    analytes: analytes.map((code) => ({
      code,
      // For the species warning shown as soon as patient and test are chosen.
      validatedSpecies: analyteRows.find((a) => a.code === code)?.validatedSpecies ?? [],
      protocols: protocols.filter((p) => p.analyte === code).map((p) => ({ id: p.id, name: p.name, instrumentId: p.instrumentId, stages: p.stages })),
      instruments: instrumentRows.filter((i) => i.analytes.includes(code)),
    })),
    orderers: staff.sort((a, b) => (a.role === b.role ? a.displayName.localeCompare(b.displayName) : a.role === 'veterinarian' ? -1 : 1)),
  };
}
