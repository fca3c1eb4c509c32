import 'server-only';
import { and, asc, eq, inArray, isNotNull, sql } from 'drizzle-orm';
import { db, type Executor } from '@/db/client';
import { analyteSettings, clinics, instruments, readings, referenceIntervals, runProtocols } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import {
  clinicalSettingsSchema,
  type AbnormalCodesInput,
  type AnalyteSettingsInput,
  type ClinicalSettings,
  type IntervalInput,
  type ProtocolInput,
} from '@/lib/validation/clinical';
import type { AnalyteContext, IntervalContext } from './evaluate';
import { installClinicalDefaults } from './install';

export { installClinicalDefaults };
import { checkUnit, convert } from './units';

const mustManage = (actor: Actor) => {
  requirePermission(actor, 'manageClinic');
};

export async function clinicalSettings(tx: Executor, clinicId: string): Promise<ClinicalSettings> {
  const [clinic] = await tx.select({ settings: clinics.settings }).from(clinics).where(eq(clinics.id, clinicId));
  // Unknown or malformed keys fall back to the safe defaults (auto-assign off).
  const parsed = clinicalSettingsSchema.safeParse(clinic?.settings ?? {});
  return parsed.success ? parsed.data : clinicalSettingsSchema.parse({});
}

export async function updateClinicalSettings(actor: Actor, input: Partial<ClinicalSettings>) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [clinic] = await tx.select({ settings: clinics.settings }).from(clinics).where(eq(clinics.id, actor.clinicId)).for('update');
    const before = await clinicalSettings(tx, actor.clinicId);
    const next = { ...before, ...input };
    await tx.update(clinics).set({ settings: { ...clinic.settings, ...next } }).where(eq(clinics.id, actor.clinicId));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'clinic.settings-changed',
      entityType: 'clinic',
      entityId: actor.clinicId,
      details: { before, after: next },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: actor.clinicId });
    return next;
  });
}

export async function analyteContexts(tx: Executor, clinicId: string, codes?: string[]): Promise<Map<string, AnalyteContext>> {
  const rows = await tx
    .select()
    .from(analyteSettings)
    .where(and(eq(analyteSettings.clinicId, clinicId), codes ? inArray(analyteSettings.code, codes.length ? codes : ['']) : undefined));
  return new Map(rows.map((r) => [r.code, r]));
}

export async function intervalContexts(tx: Executor, clinicId: string, codes?: string[]): Promise<IntervalContext[]> {
  return tx
    .select()
    .from(referenceIntervals)
    .where(and(eq(referenceIntervals.clinicId, clinicId), codes ? inArray(referenceIntervals.analyte, codes.length ? codes : ['']) : undefined));
}

/** Everything an administrator configures for results: analytes, intervals, protocols, switches. */
export async function clinicalConfiguration(actor: Actor) {
  const database = await db();
  const [analytes, intervals, protocols, settings, instrumentRows] = await Promise.all([
    database.select().from(analyteSettings).where(eq(analyteSettings.clinicId, actor.clinicId)).orderBy(asc(analyteSettings.code)),
    database
      .select()
      .from(referenceIntervals)
      .where(eq(referenceIntervals.clinicId, actor.clinicId))
      .orderBy(asc(referenceIntervals.analyte), asc(referenceIntervals.species)),
    database.select().from(runProtocols).where(eq(runProtocols.clinicId, actor.clinicId)).orderBy(asc(runProtocols.analyte)),
    clinicalSettings(database, actor.clinicId),
    database
      .select({ id: instruments.id, code: instruments.code, name: instruments.name, analytes: instruments.analytes, channels: instruments.channels })
      .from(instruments)
      .where(and(eq(instruments.clinicId, actor.clinicId), eq(instruments.active, true)))
      .orderBy(asc(instruments.name)),
  ]);
  return { analytes, intervals, protocols, settings, instruments: instrumentRows, codedResults: await codedResultsSeen(database, actor.clinicId) };
}

/** The codes instruments have sent as results, per test, so the abnormal-codes rule can be written from them. */
async function codedResultsSeen(tx: Executor, clinicId: string) {
  const code = sql<string>`${readings.valueCode} ->> 'code'`;
  const display = sql<string | null>`max(${readings.valueCode} ->> 'display')`;
  return tx
    .select({ analyte: readings.analyte, code, display, count: sql<number>`count(*)::int` })
    .from(readings)
    .where(and(eq(readings.clinicId, clinicId), isNotNull(readings.valueCode)))
    .groupBy(readings.analyte, code)
    .orderBy(asc(readings.analyte), asc(code))
    .limit(500);
}

/**
 * Sets which codes mean abnormal for a test's coded results. A test the clinic has no settings for yet (a
 * qualitative one) gets a row of its own, kept in UCUM's unity "1" since it has no quantity.
 */
export async function setAbnormalCodes(actor: Actor, code: string, input: AbnormalCodesInput) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [existing] = await tx
      .select()
      .from(analyteSettings)
      .where(and(eq(analyteSettings.clinicId, actor.clinicId), eq(analyteSettings.code, code)))
      .for('update');
    const [row] = existing
      ? await tx
          .update(analyteSettings)
          .set({ abnormalCodes: input.abnormalCodes, updatedBy: actor.userId, updatedAt: new Date() })
          .where(eq(analyteSettings.id, existing.id))
          .returning()
      : await tx
          .insert(analyteSettings)
          .values({ clinicId: actor.clinicId, code, name: input.name || code, unit: '1', displayUnit: '1', decimals: 0, abnormalCodes: input.abnormalCodes, updatedBy: actor.userId })
          .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'analyte.abnormal-codes-changed',
      entityType: 'analyte_setting',
      entityId: row.id,
      details: { analyte: code, before: existing?.abnormalCodes ?? null, after: input.abnormalCodes },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: row.id });
    return row;
  });
}

/** Adds or replaces the interval for (analyte, species, instrument); the old values stay in the audit trail. */
export async function saveInterval(actor: Actor, input: IntervalInput) {
  mustManage(actor);
  const unit = checkUnit(input.unit);
  if (!unit.ok) throw new ApiError(400, 'invalid_unit', unit.message, [{ path: 'unit', message: unit.message }]);
  const database = await db();
  return database.transaction(async (tx) => {
    const [analyte] = await tx
      .select()
      .from(analyteSettings)
      .where(and(eq(analyteSettings.clinicId, actor.clinicId), eq(analyteSettings.code, input.analyte)));
    if (!analyte) throw notFound(`The analyte ${input.analyte}`);
    if (!convert(1, unit.ucum, analyte.unit).ok) {
      const message = `${unit.ucum} does not convert to ${analyte.unit}, the unit ${analyte.code} is kept in.`;
      throw new ApiError(400, 'invalid_unit', message, [{ path: 'unit', message }]);
    }
    if (input.instrumentId) {
      const [instrument] = await tx
        .select({ id: instruments.id })
        .from(instruments)
        .where(and(eq(instruments.id, input.instrumentId), eq(instruments.clinicId, actor.clinicId)));
      if (!instrument) throw notFound('The instrument');
    }
    const existing = (await intervalContexts(tx, actor.clinicId, [input.analyte])).find(
      (i) => i.species === input.species && i.instrumentId === input.instrumentId,
    );
    const values = { ...input, unit: unit.ucum, updatedBy: actor.userId, updatedAt: new Date() };
    const [row] = existing
      ? await tx.update(referenceIntervals).set(values).where(eq(referenceIntervals.id, existing.id)).returning()
      : await tx.insert(referenceIntervals).values({ ...values, clinicId: actor.clinicId }).returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: existing ? 'interval.changed' : 'interval.added',
      entityType: 'reference_interval',
      entityId: row.id,
      details: { before: existing ?? null, after: input },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: row.id });
    return row;
  });
}

export async function updateAnalyte(actor: Actor, code: string, input: AnalyteSettingsInput) {
  mustManage(actor);
  const display = checkUnit(input.displayUnit);
  if (!display.ok) throw new ApiError(400, 'invalid_unit', display.message, [{ path: 'displayUnit', message: display.message }]);
  const database = await db();
  return database.transaction(async (tx) => {
    const [existing] = await tx
      .select()
      .from(analyteSettings)
      .where(and(eq(analyteSettings.clinicId, actor.clinicId), eq(analyteSettings.code, code)))
      .for('update');
    if (!existing) throw notFound(`The analyte ${code}`);
    const conversion = convert(1, existing.unit, display.ucum);
    if (!conversion.ok) {
      const message = `${display.ucum} does not convert from ${existing.unit}: ${conversion.message}`;
      throw new ApiError(400, 'invalid_unit', message, [{ path: 'displayUnit', message }]);
    }
    const [row] = await tx
      .update(analyteSettings)
      .set({ ...input, displayUnit: display.ucum, updatedBy: actor.userId, updatedAt: new Date() })
      .where(eq(analyteSettings.id, existing.id))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'analyte.changed',
      entityType: 'analyte_setting',
      entityId: row.id,
      details: { before: existing, after: input },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: row.id });
    return row;
  });
}

/**
 * Changes a run protocol's stages and tolerances. Tests already started keep the stages they were
 * started with (copied onto the order), so their due times do not move.
 */
export async function updateProtocol(actor: Actor, protocolId: string, input: ProtocolInput) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const [existing] = await tx
      .select()
      .from(runProtocols)
      .where(and(eq(runProtocols.id, protocolId), eq(runProtocols.clinicId, actor.clinicId)))
      .for('update');
    if (!existing) throw notFound('The run protocol');
    const [row] = await tx
      .update(runProtocols)
      .set({ ...input, updatedBy: actor.userId, updatedAt: new Date() })
      .where(eq(runProtocols.id, protocolId))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'protocol.changed',
      entityType: 'run_protocol',
      entityId: protocolId,
      details: { before: { stages: existing.stages, earlySeconds: existing.earlySeconds, lateSeconds: existing.lateSeconds, source: existing.source }, after: input },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: protocolId });
    return row;
  });
}

export async function installDefaultsFor(actor: Actor) {
  mustManage(actor);
  const database = await db();
  return database.transaction(async (tx) => {
    const added = await installClinicalDefaults(tx, actor.clinicId, actor.userId);
    if (added.length) await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: actor.clinicId });
    return added;
  });
}

/** The protocol for an analyte on an instrument: the instrument's own first, then the analyte-wide one. */
export async function protocolFor(tx: Executor, clinicId: string, analyte: string, instrumentId: string | null) {
  const rows = await tx
    .select()
    .from(runProtocols)
    .where(and(eq(runProtocols.clinicId, clinicId), eq(runProtocols.analyte, analyte)));
  return rows.find((p) => instrumentId !== null && p.instrumentId === instrumentId) ?? rows.find((p) => p.instrumentId === null) ?? null;
}
