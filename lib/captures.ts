import 'server-only';
import { and, eq } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { analyteSettings, readings, unparsedCaptures } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { sameUnit } from '@/lib/clinical/units';
import { specimenFor } from '@/lib/readings/specimens';
import { applyQualityOnIngest } from '@/lib/quality/ingest-step';
import type { TranscribeCaptureInput } from '@/lib/validation/api';

/** The units a test may be typed in: the one its intervals are kept in and the one the clinic reads it in. */
export function unitsOf(analyte: { unit: string; displayUnit: string }): string[] {
  return [...new Set([analyte.unit, analyte.displayUnit])];
}

/** The clinic's tests with their units, for the typed-in result form. */
export async function typableAnalytes(actor: Actor) {
  requirePermission(actor, 'assignReadings');
  const database = await db();
  const rows = await database
    .select({ code: analyteSettings.code, name: analyteSettings.name, unit: analyteSettings.unit, displayUnit: analyteSettings.displayUnit })
    .from(analyteSettings)
    .where(eq(analyteSettings.clinicId, actor.clinicId))
    .orderBy(analyteSettings.code);
  return rows.map((r) => ({ code: r.code, name: r.name, units: unitsOf(r) }));
}

async function lockOpenCapture(tx: Tx, actor: Actor, captureId: string) {
  requirePermission(actor, 'assignReadings');
  const [capture] = await tx
    .select()
    .from(unparsedCaptures)
    .where(and(eq(unparsedCaptures.id, captureId), eq(unparsedCaptures.clinicId, actor.clinicId)))
    .for('update');
  if (!capture) throw notFound('The capture');
  if (capture.status !== 'open') {
    throw new ApiError(409, 'already_handled', `This capture was already ${capture.status}.`);
  }
  return capture;
}

/** Dismisses a capture that holds no result (paper-feed notices, a self-test); the text stays on record. */
export async function dismissCapture(actor: Actor, captureId: string, reason: string) {
  const database = await db();
  return database.transaction(async (tx) => {
    await lockOpenCapture(tx, actor, captureId);
    await tx
      .update(unparsedCaptures)
      .set({ status: 'dismissed', handledBy: actor.userId, handledAt: new Date(), handlingNote: reason })
      .where(eq(unparsedCaptures.id, captureId));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'capture.dismissed',
      entityType: 'unparsed_capture',
      entityId: captureId,
      details: { reason },
    });
    await publish(tx, { type: 'capture.updated', clinicId: actor.clinicId, id: captureId });
    return { captureId, status: 'dismissed' as const };
  });
}

/**
 * Turns a capture into a reading from values a person typed while reading the raw text. The reading
 * is unassigned and marked as transcribed; it then goes through Intake like any other.
 */
export async function transcribeCapture(actor: Actor, captureId: string, input: TranscribeCaptureInput) {
  const database = await db();
  return database.transaction(async (tx) => {
    const capture = await lockOpenCapture(tx, actor, captureId);
    // The same tests and units as everywhere else, so the same intervals and flags apply to a typed result.
    const [analyte] = await tx
      .select()
      .from(analyteSettings)
      .where(and(eq(analyteSettings.clinicId, actor.clinicId), eq(analyteSettings.code, input.analyte)));
    if (!analyte) {
      throw new ApiError(400, 'invalid_request', 'Choose a test from the clinic’s list.', [{ path: 'analyte', message: `"${input.analyte}" is not one of the clinic’s tests.` }]);
    }
    const units = unitsOf(analyte);
    const unit = units.find((u) => sameUnit(u, input.unit));
    if (!unit) {
      throw new ApiError(400, 'invalid_request', `Choose the unit ${analyte.code} is reported in.`, [{ path: 'unit', message: `Use ${units.join(' or ')}.` }]);
    }
    const measuredAt = input.measuredAt ? new Date(input.measuredAt) : null;
    const specimenId = await specimenFor(tx, { ...capture, sampleId: input.sampleId, patientRef: null, measuredAt });
    const [inserted] = await tx
      .insert(readings)
      .values({
        specimenId,
        clinicId: actor.clinicId,
        bridgeId: capture.bridgeId,
        captureImportId: capture.captureImportId,
        idempotencyKey: `transcribed:${capture.id}`,
        instrumentId: capture.instrumentId,
        instrumentCode: capture.instrumentCode,
        analyte: input.analyte,
        value: input.value,
        comparator: input.comparator,
        unit,
        flags: ['transcribed'],
        enteredBy: actor.userId,
        sampleId: input.sampleId,
        measuredAt,
        receivedAt: capture.receivedAt,
        raw: capture.raw,
      })
      .returning();
    // Lab quality as for any other reading: QC recognition by sample ID, kit lot, QC-failed and expiry marks.
    await applyQualityOnIngest(tx, inserted, {});
    const reading = inserted;
    await tx
      .update(unparsedCaptures)
      .set({
        status: 'transcribed',
        handledBy: actor.userId,
        handledAt: new Date(),
        handlingNote: input.note ?? null,
        transcribedReadingId: reading.id,
      })
      .where(eq(unparsedCaptures.id, captureId));
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'reading.transcribed',
      entityType: 'reading',
      entityId: reading.id,
      details: { captureId, analyte: input.analyte, value: input.value, comparator: input.comparator, unit: input.unit },
    });
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'capture.transcribed',
      entityType: 'unparsed_capture',
      entityId: captureId,
      details: { readingId: reading.id },
    });
    await publish(tx, { type: 'capture.updated', clinicId: actor.clinicId, id: captureId });
    await publish(tx, { type: 'reading.created', clinicId: actor.clinicId, id: reading.id });
    return { captureId, readingId: reading.id, status: 'transcribed' as const };
  });
}
