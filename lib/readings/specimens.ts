import 'server-only';
import { and, desc, eq, gte, isNull, lte, ne, sql } from 'drizzle-orm';
import type { Tx } from '@/db/client';
import { readings, specimens, type Reading } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { publish } from '@/lib/live/bus';

/**
 * How far apart two readings with the same instrument and sample ID may arrive and still be one tube.
 * An analyzer sends a panel within minutes; the same label hours later is a new draw (a rerun is
 * best kept apart, so a person sees both). Common practice, no source.
 */
export const SAME_SAMPLE_WINDOW_MS = 2 * 3_600_000;
/**
 * Readings without a sample ID belong together when one instrument sent them with the same patient ID
 * and the same measurement time (the results of one message or one slip), arriving this close together.
 */
export const SAME_MESSAGE_WINDOW_MS = 10 * 60_000;

export interface SpecimenKey {
  clinicId: string;
  instrumentId: string | null;
  instrumentCode: string;
  sampleId: string | null;
  patientRef: string | null;
  measuredAt: Date | null;
  receivedAt: Date;
}

const blank = (value: string | null) => !value || !value.trim();

/**
 * The specimen a new reading belongs to, created when none fits. Called inside the ingest transaction;
 * an advisory lock on the key makes two uploads of one panel land on one specimen under concurrency.
 */
export async function specimenFor(tx: Tx, key: SpecimenKey): Promise<string> {
  const sampleId = blank(key.sampleId) ? null : key.sampleId!.trim();
  const patientRef = blank(key.patientRef) ? null : key.patientRef!.trim();
  const lockKey = `${key.clinicId}|${key.instrumentCode}|${sampleId?.toLowerCase() ?? ''}|${patientRef ?? ''}`;
  await tx.execute(sql`select pg_advisory_xact_lock(hashtext(${lockKey}))`);

  let existing: { id: string } | undefined;
  if (sampleId) {
    [existing] = await tx
      .select({ id: specimens.id })
      .from(specimens)
      .where(
        and(
          eq(specimens.clinicId, key.clinicId),
          eq(specimens.instrumentCode, key.instrumentCode),
          sql`lower(${specimens.sampleId}) = ${sampleId.toLowerCase()}`,
          isNull(specimens.splitFrom),
          gte(specimens.receivedAt, new Date(key.receivedAt.getTime() - SAME_SAMPLE_WINDOW_MS)),
          lte(specimens.receivedAt, new Date(key.receivedAt.getTime() + SAME_SAMPLE_WINDOW_MS)),
        ),
      )
      .orderBy(desc(specimens.receivedAt))
      .limit(1);
  } else if (key.measuredAt) {
    // Same instrument, no sample ID, same patient ID (or none) and the same measurement time.
    [existing] = await tx
      .select({ id: specimens.id })
      .from(specimens)
      .innerJoin(readings, eq(readings.specimenId, specimens.id))
      .where(
        and(
          eq(specimens.clinicId, key.clinicId),
          eq(specimens.instrumentCode, key.instrumentCode),
          isNull(specimens.sampleId),
          isNull(specimens.splitFrom),
          patientRef ? eq(specimens.patientRef, patientRef) : isNull(specimens.patientRef),
          eq(readings.measuredAt, key.measuredAt),
          gte(specimens.receivedAt, new Date(key.receivedAt.getTime() - SAME_MESSAGE_WINDOW_MS)),
        ),
      )
      .orderBy(desc(specimens.receivedAt))
      .limit(1);
  }
  if (existing) return existing.id;
  const [created] = await tx
    .insert(specimens)
    .values({
      clinicId: key.clinicId,
      instrumentId: key.instrumentId,
      instrumentCode: key.instrumentCode,
      sampleId,
      patientRef,
      receivedAt: key.receivedAt,
    })
    .returning({ id: specimens.id });
  return created.id;
}

/**
 * Gives a locked reading a specimen of its own, when other readings of the given status share its specimen
 * (a waiting one split off in Intake; a result moved alone off a patient's panel). Null when it is alone.
 */
export async function splitOffLocked(tx: Tx, actor: Actor, reading: Reading, mates: Reading['status']) {
  if (!reading.specimenId) return null;
  const [from] = await tx.select().from(specimens).where(eq(specimens.id, reading.specimenId)).for('update');
  const others = await tx
    .select({ id: readings.id })
    .from(readings)
    .where(and(eq(readings.specimenId, from.id), eq(readings.status, mates), ne(readings.id, reading.id)));
  if (others.length === 0) return null;
  const [created] = await tx
    .insert(specimens)
    .values({
      clinicId: actor.clinicId,
      instrumentId: from.instrumentId,
      instrumentCode: from.instrumentCode,
      sampleId: from.sampleId,
      patientRef: from.patientRef,
      receivedAt: reading.receivedAt,
      splitFrom: from.id,
    })
    .returning({ id: specimens.id });
  await tx.update(readings).set({ specimenId: created.id }).where(eq(readings.id, reading.id));
  await recordAudit(tx, {
    clinicId: actor.clinicId,
    actorUserId: actor.userId,
    action: 'reading.split-off',
    entityType: 'reading',
    entityId: reading.id,
    details: { fromSpecimenId: from.id, specimenId: created.id },
  });
  await publish(tx, { type: 'reading.split', clinicId: actor.clinicId, id: reading.id });
  return { specimenId: created.id, fromSpecimenId: from.id };
}
