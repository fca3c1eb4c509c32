import 'server-only';
import { and, asc, count, desc, eq, gte, inArray, isNull, sql } from 'drizzle-orm';
import { db, type Executor } from '@/db/client';
import {
  clinics,
  controlMaterials,
  instruments,
  intervalVerifications,
  kitLots,
  labOrders,
  qualityGoals,
  readings,
  referenceIntervals,
  roomTemperatureLogs,
} from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { checkUnit } from '@/lib/clinical/units';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { isUniqueViolation } from '@/lib/staff';
import {
  storedQualitySettingsSchema,
  type ControlMaterialInput,
  type KitLotInput,
  type KitLotUpdate,
  type QualityGoalInput,
  type QualitySettings,
  type TemperatureEntryInput,
  type VerificationInput,
} from '@/lib/validation/quality';
import { kitLotStock, localDay } from './kits';
import { verifyReferenceInterval } from './reference-verification';
import { qcReadingsWithUnits } from './qc';
import { establishTarget } from './statistics';

const mustManage = (actor: Actor) => requirePermission(actor, 'manageQuality');

async function audited(tx: Executor, actor: Actor, action: string, entityType: string, entityId: string, details: Record<string, unknown>) {
  await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action, entityType, entityId, details });
  await publish(tx, { type: 'quality.updated', clinicId: actor.clinicId, id: entityId });
}

export async function clinicClock(tx: Executor, clinicId: string): Promise<{ timeZone: string; settings: QualitySettings }> {
  const [clinic] = await tx.select({ timeZone: clinics.timeZone, settings: clinics.settings }).from(clinics).where(eq(clinics.id, clinicId));
  const parsed = storedQualitySettingsSchema.safeParse(clinic?.settings ?? {});
  return { timeZone: clinic?.timeZone ?? 'UTC', settings: parsed.success ? parsed.data : storedQualitySettingsSchema.parse({}) };
}

export async function updateQualitySettings(actor: Actor, input: Partial<QualitySettings>) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  return database.transaction(async (tx) => {
    const [clinic] = await tx.select({ settings: clinics.settings }).from(clinics).where(eq(clinics.id, actor.clinicId)).for('update');
    const { settings: before } = await clinicClock(tx, actor.clinicId);
    const next = { ...before, ...input };
    await tx.update(clinics).set({ settings: { ...clinic.settings, ...next } }).where(eq(clinics.id, actor.clinicId));
    await audited(tx, actor, 'clinic.quality-settings-changed', 'clinic', actor.clinicId, { before, after: next });
    return next;
  });
}

// ───────────── kit lots ─────────────

async function checkInstrument(tx: Executor, clinicId: string, instrumentId: string | null, analyte: string) {
  if (!instrumentId) return;
  const [instrument] = await tx
    .select({ analytes: instruments.analytes, name: instruments.name })
    .from(instruments)
    .where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, clinicId)));
  if (!instrument) throw new ApiError(400, 'invalid_request', 'That instrument is not one of this clinic’s.', [{ path: 'instrumentId', message: 'Unknown instrument.' }]);
  if (!instrument.analytes.includes(analyte)) {
    const message = `${instrument.name} does not run ${analyte}.`;
    throw new ApiError(400, 'invalid_request', message, [{ path: 'instrumentId', message }]);
  }
}

/** Tests each lot has used: readings (patient, QC, voided alike) and aborted runs. */
async function lotUsage(tx: Executor, clinicId: string, lotIds: string[]) {
  const usage = new Map<string, { patient: number; qc: number; aborted: number }>();
  for (const id of lotIds) usage.set(id, { patient: 0, qc: 0, aborted: 0 });
  if (lotIds.length === 0) return usage;
  const byReading = await tx
    .select({ lot: readings.kitLotId, control: sql<boolean>`${readings.status} = 'control'`, n: count() })
    .from(readings)
    .where(and(eq(readings.clinicId, clinicId), inArray(readings.kitLotId, lotIds)))
    .groupBy(readings.kitLotId, sql`${readings.status} = 'control'`);
  for (const row of byReading) {
    const u = usage.get(row.lot as string)!;
    if (row.control) u.qc += row.n;
    else u.patient += row.n;
  }
  const aborted = await tx
    .select({ lot: labOrders.kitLotId, n: count() })
    .from(labOrders)
    .where(and(eq(labOrders.clinicId, clinicId), inArray(labOrders.kitLotId, lotIds), eq(labOrders.status, 'aborted'), eq(labOrders.testConsumed, true)))
    .groupBy(labOrders.kitLotId);
  for (const row of aborted) usage.get(row.lot as string)!.aborted += row.n;
  return usage;
}

export async function kitLotsWithStock(tx: Executor, clinicId: string, options: { includeFinished?: boolean } = {}) {
  const { timeZone, settings } = await clinicClock(tx, clinicId);
  const rows = await tx
    .select({ lot: kitLots, instrumentName: instruments.name })
    .from(kitLots)
    .leftJoin(instruments, eq(instruments.id, kitLots.instrumentId))
    .where(and(eq(kitLots.clinicId, clinicId), options.includeFinished ? undefined : isNull(kitLots.finishedAt)))
    .orderBy(asc(kitLots.analyte), asc(kitLots.expiresOn));
  const usage = await lotUsage(tx, clinicId, rows.map((r) => r.lot.id));
  const today = localDay(new Date(), timeZone);
  return rows.map(({ lot, instrumentName }) => ({
    ...lot,
    instrumentName,
    usage: usage.get(lot.id)!,
    stock: kitLotStock({ ...lot, used: usage.get(lot.id)!, warnDaysBeforeExpiry: settings.kitWarnDays }, today),
  }));
}
export type KitLotView = Awaited<ReturnType<typeof kitLotsWithStock>>[number];

export async function listKitLots(actor: Actor, includeFinished = false) {
  const database = await db();
  return kitLotsWithStock(database, actor.clinicId, { includeFinished });
}

export async function createKitLot(actor: Actor, input: KitLotInput) {
  mustManage(actor);
  const database = await db();
  try {
    return await database.transaction(async (tx) => {
      await checkInstrument(tx, actor.clinicId, input.instrumentId, input.analyte);
      const [lot] = await tx.insert(kitLots).values({ ...input, clinicId: actor.clinicId, createdBy: actor.userId }).returning();
      await audited(tx, actor, 'kit-lot.received', 'kit_lot', lot.id, { analyte: lot.analyte, lotNumber: lot.lotNumber, expiresOn: lot.expiresOn, tests: lot.testsPerKit * lot.kits });
      return lot;
    });
  } catch (error) {
    if (isUniqueViolation(error)) throw new ApiError(409, 'lot_exists', 'This lot is already recorded for this test.', [{ path: 'lotNumber', message: 'Already recorded.' }]);
    throw error;
  }
}

export async function updateKitLot(actor: Actor, lotId: string, input: KitLotUpdate) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [lot] = await tx.select().from(kitLots).where(and(eq(kitLots.id, lotId), eq(kitLots.clinicId, actor.clinicId))).for('update');
    if (!lot) throw notFound('The kit lot');
    if (input.instrumentId !== undefined) await checkInstrument(tx, actor.clinicId, input.instrumentId, lot.analyte);
    const change: Partial<typeof kitLots.$inferInsert> = {};
    if (input.openedOn !== undefined) change.openedOn = input.openedOn;
    if (input.instrumentId !== undefined) change.instrumentId = input.instrumentId;
    if (input.storageNotes !== undefined) change.storageNotes = input.storageNotes;
    if (input.lowAt !== undefined) change.lowAt = input.lowAt;
    if (input.finished !== undefined) change.finishedAt = input.finished ? new Date() : null;
    const [updated] = await tx.update(kitLots).set(change).where(eq(kitLots.id, lotId)).returning();
    await audited(tx, actor, 'kit-lot.updated', 'kit_lot', lotId, { change: input });
    return updated;
  });
}

/** The lot loaded in an instrument for an analyte (the newest opened one still in use). */
export async function loadedLot(tx: Executor, clinicId: string, instrumentId: string | null, analyte: string) {
  if (!instrumentId) return null;
  return (await loadedLots(tx, clinicId, [{ instrumentId, analyte }])).get(`${instrumentId}|${analyte}`) ?? null;
}

/** The lot loaded for each instrument and analyte (keyed `instrumentId|analyte`), in one query for a batch. */
export async function loadedLots(tx: Executor, clinicId: string, pairs: readonly { instrumentId: string; analyte: string }[]) {
  const found = new Map<string, typeof kitLots.$inferSelect>();
  if (!pairs.length) return found;
  const lots = await tx
    .select()
    .from(kitLots)
    .where(
      and(
        eq(kitLots.clinicId, clinicId),
        inArray(kitLots.instrumentId, [...new Set(pairs.map((p) => p.instrumentId))]),
        inArray(kitLots.analyte, [...new Set(pairs.map((p) => p.analyte))]),
        isNull(kitLots.finishedAt),
      ),
    )
    .orderBy(desc(sql`coalesce(${kitLots.openedOn}, ${kitLots.createdAt}::date)`), desc(kitLots.createdAt));
  // In this order the first lot of each pair is the one in use.
  for (const lot of lots) {
    const key = `${lot.instrumentId}|${lot.analyte}`;
    if (!found.has(key)) found.set(key, lot);
  }
  return found;
}

// ───────────── room temperature ─────────────

export async function logTemperature(actor: Actor, input: TemperatureEntryInput) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [entry] = await tx
      .insert(roomTemperatureLogs)
      .values({ ...input, clinicId: actor.clinicId, recordedBy: actor.userId })
      .onConflictDoUpdate({
        target: [roomTemperatureLogs.clinicId, roomTemperatureLogs.day],
        set: { temperatureC: input.temperatureC, note: input.note, recordedBy: actor.userId, recordedAt: new Date() },
      })
      .returning();
    await audited(tx, actor, 'room-temperature.logged', 'room_temperature_log', entry.id, { day: entry.day, temperatureC: entry.temperatureC });
    return entry;
  });
}

export async function listTemperatures(actor: Actor, days = 31) {
  const database = await db();
  const since = new Date(Date.now() - days * 24 * 3600 * 1000).toISOString().slice(0, 10);
  return database
    .select()
    .from(roomTemperatureLogs)
    .where(and(eq(roomTemperatureLogs.clinicId, actor.clinicId), gte(roomTemperatureLogs.day, since)))
    .orderBy(desc(roomTemperatureLogs.day));
}

export async function setOperatingRange(actor: Actor, instrumentId: string, range: { minC: number | null; maxC: number | null }) {
  requirePermission(actor, 'manageClinic');
  if (range.minC !== null && range.maxC !== null && range.minC > range.maxC) {
    throw new ApiError(400, 'invalid_request', 'The lowest temperature is above the highest.', [{ path: 'minC', message: 'Must not be above the highest.' }]);
  }
  const database = await db();
  return database.transaction(async (tx) => {
    const [updated] = await tx
      .update(instruments)
      .set({ operatingMinC: range.minC, operatingMaxC: range.maxC })
      .where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, actor.clinicId)))
      .returning({ id: instruments.id });
    if (!updated) throw notFound('The instrument');
    await audited(tx, actor, 'instrument.operating-range-set', 'instrument', instrumentId, range);
    return { instrumentId, ...range };
  });
}

// ───────────── control materials and QC readings ─────────────

export async function createControlMaterial(actor: Actor, input: ControlMaterialInput) {
  mustManage(actor);
  const database = await db();
  try {
    return await database.transaction(async (tx) => {
      await checkInstrument(tx, actor.clinicId, input.instrumentId, input.analyte);
      // QC readings are converted into this unit before they are compared, so it must be one UCUM can read.
      const unit = checkUnit(input.unit);
      if (!unit.ok) throw new ApiError(400, 'invalid_request', unit.message, [{ path: 'unit', message: `${unit.message} Give the unit in UCUM, e.g. mg/L or mmol/L.` }]);
      const [material] = await tx
        .insert(controlMaterials)
        .values({ ...input, clinicId: actor.clinicId, targetSource: 'insert', createdBy: actor.userId })
        .returning();
      await audited(tx, actor, 'control-material.added', 'control_material', material.id, { ...input });
      return material;
    });
  } catch (error) {
    if (isUniqueViolation(error)) throw new ApiError(409, 'material_exists', 'This lot and level is already recorded for this test.', [{ path: 'level', message: 'Already recorded.' }]);
    throw error;
  }
}

/** Sets a control's target mean and SD from at least 20 of its own QC runs (all of them, as measured). */
export async function establishControlTarget(actor: Actor, materialId: string) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [material] = await tx
      .select()
      .from(controlMaterials)
      .where(and(eq(controlMaterials.id, materialId), eq(controlMaterials.clinicId, actor.clinicId)))
      .for('update');
    if (!material) throw notFound('The control material');
    // The runs in the control's unit; a run whose unit does not convert is left out, and the answer says so.
    const { comparable, problems } = await qcReadingsWithUnits(tx, actor.clinicId, { analyte: material.analyte });
    const runs = comparable.filter((r) => r.materialId === materialId);
    const leftOut = problems.filter((p) => p.materialId === materialId).length;
    const result = establishTarget(runs.map((r) => r.value as number));
    const unitNote = leftOut ? ` ${leftOut} run${leftOut === 1 ? '' : 's'} left out: unit not convertible to ${material.unit}.` : '';
    if (!result.ok) throw new ApiError(409, 'too_few_runs', unitNote ? `${result.reason}.${unitNote}` : result.reason);
    const before = { mean: material.targetMean, sd: material.targetSd, source: material.targetSource };
    const [updated] = await tx
      .update(controlMaterials)
      .set({ targetMean: result.summary.mean, targetSd: result.summary.sd, targetSource: 'established' })
      .where(eq(controlMaterials.id, materialId))
      .returning();
    await audited(tx, actor, 'control-material.target-established', 'control_material', materialId, { before, after: result.summary });
    return updated;
  });
}

/**
 * The control material a QC reading was run on: the one with its sample ID, else the one of the level the
 * slip printed (a printout profile's control line), else the only one without a sample ID. Never a guess
 * between two: an unmatched QC reading waits on the QC page for a person to name its material.
 */
export async function matchControlMaterial(tx: Executor, clinicId: string, reading: ControlRun) {
  return pickControlMaterial(await activeControlMaterials(tx, clinicId, [reading.analyte]), reading);
}

type ControlRun = { analyte: string; instrumentId: string | null; sampleId: string | null; level?: string | null };

/** The clinic's active control materials for these analytes (a batch's control runs look them up once). */
export async function activeControlMaterials(tx: Executor, clinicId: string, analytes: readonly string[]) {
  if (!analytes.length) return [];
  return tx
    .select()
    .from(controlMaterials)
    .where(and(eq(controlMaterials.clinicId, clinicId), inArray(controlMaterials.analyte, [...new Set(analytes)]), eq(controlMaterials.active, true)));
}

/** matchControlMaterial's choice among materials already loaded. */
export function pickControlMaterial<M extends typeof controlMaterials.$inferSelect>(materials: readonly M[], reading: ControlRun): M | null {
  const here = materials.filter((m) => m.analyte === reading.analyte && (m.instrumentId === null || m.instrumentId === reading.instrumentId));
  const sample = reading.sampleId?.trim().toLowerCase();
  const bySample = sample ? here.filter((m) => m.sampleId?.trim().toLowerCase() === sample) : [];
  if (bySample.length === 1) return bySample[0];
  const level = reading.level?.trim().toLowerCase();
  if (level) {
    const byLevel = here.filter((m) => m.level.trim().toLowerCase() === level);
    return byLevel.length === 1 ? byLevel[0] : null;
  }
  return here.length === 1 && !here[0].sampleId ? here[0] : null;
}

async function loadMaterial(tx: Executor, clinicId: string, materialId: string, analyte: string) {
  const [material] = await tx.select().from(controlMaterials).where(and(eq(controlMaterials.id, materialId), eq(controlMaterials.clinicId, clinicId)));
  if (!material) throw notFound('The control material');
  if (material.analyte !== analyte) {
    throw new ApiError(400, 'invalid_request', `That control is for ${material.analyte}, not ${analyte}.`, [{ path: 'controlMaterialId', message: 'Wrong test.' }]);
  }
  return material;
}

/** Intake: a waiting reading was a control run. It leaves Intake and can never be put on a patient. */
export async function markReadingAsControl(actor: Actor, readingId: string, input: { controlMaterialId: string | null; note: string | null }) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [reading] = await tx.select().from(readings).where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId))).for('update');
    if (!reading) throw notFound('The reading');
    if (reading.status !== 'unassigned') {
      throw new ApiError(409, 'not_waiting', reading.status === 'control' ? 'This reading is already a control run.' : 'Only a reading waiting in Intake can be marked as a control run; take it off the patient first.');
    }
    const material = input.controlMaterialId
      ? await loadMaterial(tx, actor.clinicId, input.controlMaterialId, reading.analyte)
      : await matchControlMaterial(tx, actor.clinicId, reading);
    await tx
      .update(readings)
      .set({ status: 'control', controlMaterialId: material?.id ?? null, qualityMarks: reading.qualityMarks.filter((m) => m !== 'qc-failed') })
      .where(eq(readings.id, readingId));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'reading.marked-control',
      entityType: 'reading',
      entityId: readingId,
      details: { controlMaterialId: material?.id ?? null, note: input.note, how: 'by hand' },
    });
    await publish(tx, { type: 'quality.updated', clinicId: actor.clinicId, id: readingId });
    return { readingId, status: 'control' as const, controlMaterialId: material?.id ?? null };
  });
}

/** Names the material of a QC reading that arrived without one (or corrects it). */
export async function setReadingControlMaterial(actor: Actor, readingId: string, controlMaterialId: string) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [reading] = await tx.select().from(readings).where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId))).for('update');
    if (!reading) throw notFound('The reading');
    if (reading.status !== 'control') throw new ApiError(409, 'not_control', 'This reading is not a control run.');
    const material = await loadMaterial(tx, actor.clinicId, controlMaterialId, reading.analyte);
    await tx.update(readings).set({ controlMaterialId: material.id }).where(eq(readings.id, readingId));
    await audited(tx, actor, 'reading.control-material-set', 'reading', readingId, { before: reading.controlMaterialId, after: material.id });
    return { readingId, controlMaterialId: material.id };
  });
}

// ───────────── quality goals and interval verification ─────────────

export async function setQualityGoal(actor: Actor, input: QualityGoalInput) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [goal] = await tx
      .insert(qualityGoals)
      .values({ ...input, clinicId: actor.clinicId, updatedBy: actor.userId })
      .onConflictDoUpdate({
        target: [qualityGoals.clinicId, qualityGoals.analyte],
        set: { teaPercent: input.teaPercent, source: input.source, updatedBy: actor.userId, updatedAt: new Date() },
      })
      .returning();
    await audited(tx, actor, 'quality-goal.set', 'quality_goal', goal.id, { ...input });
    return goal;
  });
}

export async function recordVerification(actor: Actor, input: VerificationInput) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [interval] = await tx
      .select()
      .from(referenceIntervals)
      .where(and(eq(referenceIntervals.id, input.intervalId), eq(referenceIntervals.clinicId, actor.clinicId)));
    if (!interval) throw notFound('The reference interval');
    if (interval.low === null && interval.high === null) throw new ApiError(400, 'invalid_request', 'That interval has no limits to verify.');
    const result = verifyReferenceInterval({ low: interval.low, high: interval.high, values: input.values, secondValues: input.secondValues });
    if (result.decision === 'too-few-samples') {
      throw new ApiError(400, 'invalid_request', result.message, [{ path: input.secondValues && result.second ? 'secondValues' : 'values', message: result.message }]);
    }
    const [row] = await tx
      .insert(intervalVerifications)
      .values({
        clinicId: actor.clinicId,
        intervalId: interval.id,
        analyte: interval.analyte,
        species: interval.species,
        unit: interval.unit,
        low: interval.low,
        high: interval.high,
        intervalSource: interval.source,
        values: input.values,
        secondValues: input.secondValues,
        decision: result.decision,
        note: input.note,
        performedBy: actor.userId,
      })
      .returning();
    await audited(tx, actor, 'reference-interval.verified', 'interval_verification', row.id, {
      intervalId: interval.id,
      decision: result.decision,
      outside: result.first.outside,
      secondOutside: result.second?.outside ?? null,
    });
    return { ...row, result };
  });
}

export async function listVerifications(actor: Actor) {
  const database = await db();
  const rows = await database
    .select()
    .from(intervalVerifications)
    .where(eq(intervalVerifications.clinicId, actor.clinicId))
    .orderBy(desc(intervalVerifications.performedAt));
  return rows.map((row) => ({
    ...row,
    result: verifyReferenceInterval({ low: row.low, high: row.high, values: row.values, secondValues: row.secondValues }),
  }));
}
