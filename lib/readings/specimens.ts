import 'server-only';
import { randomUUID } from 'node:crypto';
import { and, eq, ne, sql } from 'drizzle-orm';
import type { Tx } from '@/db/client';
import { readings, specimens, type Reading } from '@/db/schema';
import { insertJsonRows } from '@/lib/bulk-insert';
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
  const [id] = await specimensFor(tx, [key]);
  return id;
}

/** One tube or one message of a batch: the readings that share a specimen without asking the database. */
interface Group extends SpecimenKey {
  sampleId: string | null;
  patientRef: string | null;
  lock: string;
}

/**
 * specimenFor for a batch's new readings, in order (one id per key), set-wise: one statement takes the
 * locks, at most two look up existing specimens, one creates the rest. The answer is the one specimenFor
 * called on each reading in turn gives: readings of one tube (same instrument and sample ID) or one message
 * (no sample ID, same measurement time) share one; a tube's later reading also finds a specimen made for
 * an earlier reading of the same call, as it would once that one was stored.
 */
export async function specimensFor(tx: Tx, keys: readonly SpecimenKey[]): Promise<string[]> {
  if (!keys.length) return [];
  const groupOf: string[] = [];
  const groups = new Map<string, Group>();
  keys.forEach((key, i) => {
    const sampleId = blank(key.sampleId) ? null : key.sampleId!.trim();
    const patientRef = blank(key.patientRef) ? null : key.patientRef!.trim();
    const lock = `${key.clinicId}|${key.instrumentCode}|${sampleId?.toLowerCase() ?? ''}|${patientRef ?? ''}`;
    // Without a sample ID only the same measurement time makes one message; without that, each reading is its own.
    const group = `${lock}|${sampleId ? '' : (key.measuredAt?.toISOString() ?? `#${i}`)}`;
    groupOf.push(group);
    if (!groups.has(group)) groups.set(group, { ...key, sampleId, patientRef, lock });
  });
  const firsts = [...groups.entries()];

  // In one order for every caller, so two batches waiting on each other's keys cannot deadlock.
  const locks = JSON.stringify([...new Set(firsts.map(([, g]) => g.lock))]);
  await tx.execute(sql`select count(pg_advisory_xact_lock(h)) from (select distinct hashtext(k) as h from jsonb_array_elements_text(${locks}::jsonb) as l(k) order by h) as s`);

  type Found = { id: string; receivedAt: number };
  const existing = new Map<number, Found>();
  const bySample = firsts.map(([, g], i) => ({ g, i })).filter(({ g }) => g.sampleId);
  if (bySample.length) {
    // Same instrument and sample ID (any case), arrived within the window, not split off: the newest.
    const wanted = JSON.stringify(bySample.map(({ g, i }) => ({ i, clinic: g.clinicId, code: g.instrumentCode, sample: g.sampleId!.toLowerCase(), at: g.receivedAt.toISOString() })));
    const found = await tx.execute<{ i: number; id: string; received_at: string | Date }>(sql`
      select k.i, s.id, s.received_at from jsonb_to_recordset(${wanted}::jsonb) as k(i int, clinic uuid, code text, sample text, at timestamptz)
      cross join lateral (
        select ${specimens.id} as id, ${specimens.receivedAt} as received_at from ${specimens}
        where ${specimens.clinicId} = k.clinic and ${specimens.instrumentCode} = k.code and lower(${specimens.sampleId}) = k.sample
          and ${specimens.splitFrom} is null
          and ${specimens.receivedAt} >= k.at - make_interval(secs => ${SAME_SAMPLE_WINDOW_MS / 1000})
          and ${specimens.receivedAt} <= k.at + make_interval(secs => ${SAME_SAMPLE_WINDOW_MS / 1000})
        order by ${specimens.receivedAt} desc limit 1) as s`);
    for (const row of found.rows) existing.set(Number(row.i), { id: row.id, receivedAt: new Date(row.received_at).getTime() });
  }
  const byMessage = firsts.map(([, g], i) => ({ g, i })).filter(({ g }) => !g.sampleId && g.measuredAt);
  if (byMessage.length) {
    // Same instrument, no sample ID, same patient ID (or none), a reading with the same measurement time.
    const wanted = JSON.stringify(byMessage.map(({ g, i }) => ({ i, clinic: g.clinicId, code: g.instrumentCode, ref: g.patientRef, measured: g.measuredAt!.toISOString(), at: g.receivedAt.toISOString() })));
    const found = await tx.execute<{ i: number; id: string }>(sql`
      select k.i, s.id from jsonb_to_recordset(${wanted}::jsonb) as k(i int, clinic uuid, code text, ref text, measured timestamptz, at timestamptz)
      cross join lateral (
        select ${specimens.id} as id from ${specimens} inner join ${readings} on ${readings.specimenId} = ${specimens.id}
        where ${specimens.clinicId} = k.clinic and ${specimens.instrumentCode} = k.code and ${specimens.sampleId} is null
          and ${specimens.splitFrom} is null and ${specimens.patientRef} is not distinct from k.ref
          and ${readings.measuredAt} = k.measured
          and ${specimens.receivedAt} >= k.at - make_interval(secs => ${SAME_MESSAGE_WINDOW_MS / 1000})
        order by ${specimens.receivedAt} desc limit 1) as s`);
    for (const row of found.rows) existing.set(Number(row.i), { id: row.id, receivedAt: 0 });
  }

  // In order, as one reading after another: a tube's specimen made earlier in this call counts like a stored one.
  const made: (typeof specimens.$inferInsert & { id: string })[] = [];
  const idOf = new Map<string, string>();
  firsts.forEach(([group, g], i) => {
    let choice = existing.get(i);
    if (g.sampleId) {
      const at = g.receivedAt.getTime();
      for (const m of made) {
        const t = (m.receivedAt as Date).getTime();
        if (m.instrumentCode === g.instrumentCode && m.sampleId?.toLowerCase() === g.sampleId.toLowerCase() && Math.abs(t - at) <= SAME_SAMPLE_WINDOW_MS && (!choice || t > choice.receivedAt)) {
          choice = { id: m.id, receivedAt: t };
        }
      }
    }
    if (!choice) {
      const row = { id: randomUUID(), clinicId: g.clinicId, instrumentId: g.instrumentId, instrumentCode: g.instrumentCode, sampleId: g.sampleId, patientRef: g.patientRef, receivedAt: g.receivedAt };
      made.push(row);
      choice = { id: row.id, receivedAt: g.receivedAt.getTime() };
    }
    idOf.set(group, choice.id);
  });
  await insertJsonRows(tx, specimens, made);
  return groupOf.map((group) => idOf.get(group)!);
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
