import 'server-only';
import { and, asc, desc, eq, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { auditEvents, instruments, patients, readings, staffUsers, unparsedCaptures } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';

const readingColumns = {
  id: readings.id,
  status: readings.status,
  analyte: readings.analyte,
  value: readings.value,
  comparator: readings.comparator,
  unit: readings.unit,
  flags: readings.flags,
  sampleId: readings.sampleId,
  patientRef: readings.patientRef,
  measuredAt: readings.measuredAt,
  receivedAt: readings.receivedAt,
  instrumentId: readings.instrumentId,
  instrumentCode: readings.instrumentCode,
  instrumentSerial: readings.instrumentSerial,
  instrumentRange: readings.instrumentRange,
  resultStatus: readings.resultStatus,
  instrumentName: instruments.name,
  raw: readings.raw,
  patientId: readings.patientId,
  patientName: patients.name,
  patientRecordNumber: patients.recordNumber,
  patientSpecies: patients.species,
  // Lab quality: marks fixed on arrival and the kit lot the run used.
  qualityMarks: readings.qualityMarks,
  kitLotId: readings.kitLotId,
};

export type ReadingView = Awaited<ReturnType<typeof listReadings>>[number];

export async function listReadings(
  actor: Actor,
  filter: { status: 'unassigned' | 'assigned' | 'voided' | 'all'; limit: number },
) {
  const database = await db();
  const conditions = [eq(readings.clinicId, actor.clinicId)];
  if (filter.status !== 'all') conditions.push(eq(readings.status, filter.status));
  return database
    .select(readingColumns)
    .from(readings)
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(patients, eq(patients.id, readings.patientId))
    .where(and(...conditions))
    .orderBy(desc(readings.receivedAt), desc(readings.storedAt))
    .limit(filter.limit);
}

/** One reading with its audit history, oldest first. */
export async function getReading(actor: Actor, readingId: string) {
  const database = await db();
  const [reading] = await database
    .select(readingColumns)
    .from(readings)
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(patients, eq(patients.id, readings.patientId))
    .where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId)));
  if (!reading) throw notFound('The reading');
  const history = await database
    .select({
      at: auditEvents.at,
      action: auditEvents.action,
      details: auditEvents.details,
      actorName: staffUsers.displayName,
      byBridge: auditEvents.actorBridgeId,
    })
    .from(auditEvents)
    .leftJoin(staffUsers, eq(staffUsers.id, auditEvents.actorUserId))
    .where(
      and(
        eq(auditEvents.clinicId, actor.clinicId),
        eq(auditEvents.entityType, 'reading'),
        eq(auditEvents.entityId, readingId),
      ),
    )
    .orderBy(asc(auditEvents.at), asc(auditEvents.id));
  return { ...reading, history };
}

/** A patient's assigned results, newest measurement first. */
export async function patientResults(actor: Actor, patientId: string) {
  const database = await db();
  const [patient] = await database
    .select({ id: patients.id })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  return database
    .select(readingColumns)
    .from(readings)
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(patients, eq(patients.id, readings.patientId))
    .where(
      and(eq(readings.clinicId, actor.clinicId), eq(readings.patientId, patientId), eq(readings.status, 'assigned')),
    )
    // An instrument may print no time: such a reading sorts by when it arrived, not above everything (NULLS FIRST).
    .orderBy(desc(sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`), desc(readings.receivedAt));
}

export async function listCaptures(actor: Actor, status: 'open' | 'transcribed' | 'dismissed', limit = 100) {
  const database = await db();
  return database
    .select({
      id: unparsedCaptures.id,
      status: unparsedCaptures.status,
      raw: unparsedCaptures.raw,
      reason: unparsedCaptures.reason,
      receivedAt: unparsedCaptures.receivedAt,
      instrumentCode: unparsedCaptures.instrumentCode,
      instrumentName: instruments.name,
    })
    .from(unparsedCaptures)
    .leftJoin(instruments, eq(instruments.id, unparsedCaptures.instrumentId))
    .where(and(eq(unparsedCaptures.clinicId, actor.clinicId), eq(unparsedCaptures.status, status)))
    .orderBy(desc(unparsedCaptures.receivedAt))
    .limit(limit);
}
export type CaptureView = Awaited<ReturnType<typeof listCaptures>>[number];
