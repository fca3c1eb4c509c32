import 'server-only';
import { and, asc, eq, inArray } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { labOrders, readings, specimens, type Reading } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { assignLocked, reassignLocked, voidLocked } from './assign';
import { loadPatientForPlacement, lockReading } from './placement';
import { splitOffLocked } from './specimens';

// A specimen's readings (one tube's panel) are assigned, moved and voided together, in one transaction:
// all of them or none. The person names the readings they saw; if the panel changed meanwhile (a result
// arrived, or someone placed one of them) the whole action is refused, so nothing is placed unseen.

/** Locks the specimen, then its readings (in id order, so two panel actions never deadlock). */
async function lockPanel(tx: Tx, actor: Actor, specimenId: string, readingIds: string[]) {
  const [specimen] = await tx
    .select()
    .from(specimens)
    .where(and(eq(specimens.id, specimenId), eq(specimens.clinicId, actor.clinicId)))
    .for('update');
  if (!specimen) throw notFound('The specimen');
  const rows = await tx
    .select()
    .from(readings)
    .where(and(eq(readings.specimenId, specimenId), eq(readings.clinicId, actor.clinicId)))
    .orderBy(asc(readings.id))
    .for('update');
  const byId = new Map(rows.map((r) => [r.id, r]));
  const unknown = readingIds.filter((id) => !byId.has(id));
  if (unknown.length) {
    throw new ApiError(409, 'panel_changed', 'A reading you chose is not part of this specimen any more; reload and check the panel.', [], {
      readingIds: unknown,
    });
  }
  const chosen = [...new Set(readingIds)].map((id) => byId.get(id)!);
  return { specimen, rows, chosen };
}

const changed = (what: string, ids: string[]) =>
  new ApiError(409, 'panel_changed', `${what} Reload Intake and check the panel before trying again.`, [], { readingIds: ids });

/** For each order, the reading of the panel with its analyte (each reading fulfils at most one order). */
async function ordersByReading(tx: Tx, actor: Actor, chosen: Reading[], orderIds: string[]) {
  const result = new Map<string, string>();
  if (!orderIds.length) return result;
  const orders = await tx
    .select({ id: labOrders.id, analyte: labOrders.analyte })
    .from(labOrders)
    .where(and(eq(labOrders.clinicId, actor.clinicId), inArray(labOrders.id, orderIds)));
  for (const orderId of new Set(orderIds)) {
    const order = orders.find((o) => o.id === orderId);
    if (!order) throw notFound('The order');
    const reading = chosen.find((r) => r.analyte === order.analyte && !result.has(r.id));
    if (!reading) {
      throw new ApiError(409, 'order_analyte_mismatch', `That test is ${order.analyte}; this panel has no ${order.analyte} reading left to fulfil it.`);
    }
    result.set(reading.id, orderId);
  }
  return result;
}

async function auditPanel(tx: Tx, actor: Actor, specimenId: string, action: string, details: Record<string, unknown>) {
  await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action, entityType: 'specimen', entityId: specimenId, details });
}

export interface PanelAssignInput {
  patientId: string;
  readingIds: string[];
  orderIds?: string[];
  method?: 'manual' | 'suggestion';
}

/** Puts every waiting reading of a specimen on one patient, or none of them. */
export async function assignSpecimen(actor: Actor, specimenId: string, input: PanelAssignInput) {
  requirePermission(actor, 'assignReadings');
  const database = await db();
  return database.transaction(async (tx) => {
    const { rows, chosen } = await lockPanel(tx, actor, specimenId, input.readingIds);
    const placedElsewhere = chosen.filter((r) => r.status !== 'unassigned').map((r) => r.id);
    if (placedElsewhere.length) throw changed('Part of this panel was assigned or voided meanwhile.', placedElsewhere);
    const unseen = rows.filter((r) => r.status === 'unassigned' && !input.readingIds.includes(r.id)).map((r) => r.id);
    if (unseen.length) throw changed('A result of this specimen arrived after you opened it.', unseen);
    const patient = await loadPatientForPlacement(tx, actor.clinicId, input.patientId);
    const orders = await ordersByReading(tx, actor, chosen, input.orderIds ?? []);
    const placed = [];
    for (const reading of chosen) {
      placed.push(
        await assignLocked(tx, actor, reading, patient, {
          orderId: orders.get(reading.id),
          method: input.method ?? 'manual',
          details: { specimenId, panelSize: chosen.length },
        }),
      );
    }
    await auditPanel(tx, actor, specimenId, 'specimen.assigned', { patientId: patient.id, recordNumber: patient.recordNumber, readingIds: chosen.map((r) => r.id) });
    return { specimenId, patientId: patient.id, assignments: placed, speciesWarning: placed.find((p) => p.speciesWarning)?.speciesWarning ?? null };
  });
}

/** Moves a specimen's results from one patient to another (a wrong match corrected), all or none. */
export async function reassignSpecimen(
  actor: Actor,
  specimenId: string,
  input: { patientId: string; readingIds: string[]; reason: string; fromPatientId?: string; runWillGiveReading?: boolean },
) {
  requirePermission(actor, 'assignReadings');
  const database = await db();
  return database.transaction(async (tx) => {
    const { chosen } = await lockPanel(tx, actor, specimenId, input.readingIds);
    const from = new Set(chosen.map((r) => r.patientId));
    const notOnRecord = chosen.filter((r) => r.status !== 'assigned').map((r) => r.id);
    if (notOnRecord.length) throw changed('Part of this panel is not on a patient’s record any more.', notOnRecord);
    if (from.size !== 1) throw new ApiError(409, 'panel_split', 'These results are on different patients; move them one at a time.');
    const moved = [];
    for (const reading of chosen) {
      moved.push(
        await reassignLocked(tx, actor, reading, {
          patientId: input.patientId,
          fromPatientId: input.fromPatientId,
          reason: input.reason,
          runWillGiveReading: input.runWillGiveReading,
          details: { specimenId },
        }),
      );
    }
    await auditPanel(tx, actor, specimenId, 'specimen.reassigned', {
      fromPatientId: [...from][0],
      patientId: input.patientId,
      reason: input.reason,
      readingIds: chosen.map((r) => r.id),
    });
    return { specimenId, patientId: input.patientId, fromPatientId: [...from][0], moved };
  });
}

/** Voids the named readings of a specimen together (a spoiled sample, a control run), all or none. */
export async function voidSpecimen(actor: Actor, specimenId: string, input: { readingIds: string[]; reason: string; onRecord?: boolean }) {
  requirePermission(actor, 'voidReadings');
  const database = await db();
  return database.transaction(async (tx) => {
    const { rows, chosen } = await lockPanel(tx, actor, specimenId, input.readingIds);
    const voided = chosen.filter((r) => r.status === 'voided').map((r) => r.id);
    if (voided.length) throw changed('Part of this panel was voided meanwhile.', voided);
    if (!input.onRecord) {
      const unseen = rows.filter((r) => r.status === 'unassigned' && !input.readingIds.includes(r.id)).map((r) => r.id);
      if (unseen.length) throw changed('A result of this specimen arrived after you opened it.', unseen);
    }
    for (const reading of chosen) await voidLocked(tx, actor, reading, input.reason, { onRecord: input.onRecord, details: { specimenId } });
    await auditPanel(tx, actor, specimenId, 'specimen.voided', { reason: input.reason, readingIds: chosen.map((r) => r.id) });
    return { specimenId, voided: chosen.map((r) => r.id) };
  });
}

/** Takes one reading out of its specimen into a specimen of its own (then assigned or voided alone). */
export async function splitReading(actor: Actor, readingId: string) {
  requirePermission(actor, 'assignReadings');
  const database = await db();
  return database.transaction(async (tx) => {
    const reading = await lockReading(tx, actor, readingId);
    if (reading.status !== 'unassigned') throw new ApiError(409, 'not_waiting', 'Only a waiting reading can be split off its panel.');
    if (!reading.specimenId) throw new ApiError(409, 'not_in_panel', 'This reading is not part of a panel.');
    const split = await splitOffLocked(tx, actor, reading, 'unassigned');
    if (!split) throw new ApiError(409, 'not_in_panel', 'This reading is the only one waiting in its specimen.');
    return { readingId: reading.id, ...split };
  });
}
