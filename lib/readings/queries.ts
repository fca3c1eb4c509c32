import 'server-only';
import { and, asc, desc, eq, inArray, sql, type SQL } from 'drizzle-orm';
import { db } from '@/db/client';
import { selectJsonRows } from '@/lib/bulk-select';
import { analyteSettings, auditEvents, instruments, patients, readings, specimens, staffUsers, unparsedCaptures } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { analyteContexts, intervalContexts } from '@/lib/clinical/config';
import { criticalBeforeAssignment } from '@/lib/clinical/evaluate';
import { notFound } from '@/lib/http';
import { historyForPatient } from './history';
import type { WaitingQuery } from '@/lib/validation/api';

/**
 * A result as sent: a number (with comparator and unit), a code or text, the notes beside it, and the
 * analyzer's own flags and range. What evaluateResult reads; selected alike by every screen and export.
 */
export const resultValueColumns = {
  value: readings.value,
  comparator: readings.comparator,
  unit: readings.unit,
  printedUnit: readings.printedUnit,
  valueCode: readings.valueCode,
  valueText: readings.valueText,
  notes: readings.notes,
  flags: readings.flags,
  instrumentRange: readings.instrumentRange,
};

/** A reading's columns as a patient's own results show them (the patient's name is on the page; the raw printout comes with a result's detail). */
const patientResultColumns = {
  ...resultValueColumns,
  id: readings.id,
  status: readings.status,
  analyte: readings.analyte,
  /** The precision the value was sent with (null when unknown: typed in, older rows). */
  valueDecimals: readings.valueDecimals,
  enteredBy: readings.enteredBy,
  /** Who typed the result in from an unparsed capture (null for an instrument's own). */
  enteredByName: sql<string | null>`(select ${staffUsers.displayName} from ${staffUsers} where ${staffUsers.id} = ${readings.enteredBy})`,
  sampleId: readings.sampleId,
  patientRef: readings.patientRef,
  measuredAt: readings.measuredAt,
  receivedAt: readings.receivedAt,
  instrumentId: readings.instrumentId,
  instrumentCode: readings.instrumentCode,
  instrumentSerial: readings.instrumentSerial,
  resultStatus: readings.resultStatus,
  instrumentName: instruments.name,
  specimenId: readings.specimenId,
  patientId: readings.patientId,
  // Lab quality: marks fixed on arrival and the kit lot the run used.
  qualityMarks: readings.qualityMarks,
  kitLotId: readings.kitLotId,
};
const readingColumns = {
  ...patientResultColumns,
  raw: readings.raw,
  patientName: patients.name,
  patientRecordNumber: patients.recordNumber,
  patientSpecies: patients.species,
};

export type ReadingView = Awaited<ReturnType<typeof listReadings>>[number];

export async function listReadings(
  actor: Actor,
  filter: { status: 'unassigned' | 'assigned' | 'voided' | 'all'; limit: number },
) {
  const database = await db();
  const conditions = [eq(readings.clinicId, actor.clinicId)];
  if (filter.status !== 'all') conditions.push(eq(readings.status, filter.status));
  const rows = await database
    .select(readingColumns)
    .from(readings)
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(patients, eq(patients.id, readings.patientId))
    .where(and(...conditions))
    .orderBy(desc(readings.receivedAt), desc(readings.storedAt))
    .limit(filter.limit);
  // A reading not yet on a patient is flagged when it is critical for a species the clinic has limits for.
  const waiting = rows.filter((r) => r.status === 'unassigned');
  const codes = [...new Set(waiting.map((r) => r.analyte))];
  const [analytes, intervals] = codes.length
    ? await Promise.all([analyteContexts(database, actor.clinicId, codes), intervalContexts(database, actor.clinicId, codes)])
    : [new Map(), []];
  return rows.map((r) => ({
    ...r,
    critical: r.status === 'unassigned' ? criticalBeforeAssignment(r, analytes.get(r.analyte), intervals) : null,
  }));
}

/** A reading's specimen: its own id for a reading stored before specimens (none such after the migration). */
const specimenKey = sql<string>`coalesce(${readings.specimenId}, ${readings.id})`;
const firstArrival = sql<Date>`min(${readings.receivedAt})`;

/**
 * Intake: every specimen with a waiting reading, a page at a time, newest first. The counts are the
 * true ones (all waiting readings, however many), and the oldest arrival says how long the queue is.
 */
export async function listWaiting(actor: Actor, query: WaitingQuery, now = new Date()) {
  const database = await db();
  const waiting = [eq(readings.clinicId, actor.clinicId), eq(readings.status, 'unassigned')];
  const filtered: SQL[] = [...waiting];
  if (query.instrument) filtered.push(eq(readings.instrumentCode, query.instrument));
  if (query.analyte) filtered.push(eq(readings.analyte, query.analyte));
  const cutoff = query.olderThanMinutes ? new Date(now.getTime() - query.olderThanMinutes * 60_000) : null;

  const groups = database
    .select({ key: specimenKey.as('key'), first: firstArrival.as('first'), n: sql<number>`count(*)::int`.as('n') })
    .from(readings)
    .where(and(...filtered))
    .groupBy(specimenKey)
    .having(cutoff ? sql`min(${readings.receivedAt}) <= ${cutoff.toISOString()}` : undefined)
    .as('g');

  const [[summary], [matching], page, instrumentFacets, analyteFacets] = await Promise.all([
    database
      .select({ readings: sql<number>`count(*)::int`, specimens: sql<number>`count(distinct ${specimenKey})::int`, oldest: sql<string | null>`min(${readings.receivedAt})` })
      .from(readings)
      .where(and(...waiting)),
    database.select({ specimens: sql<number>`count(*)::int`, readings: sql<number>`coalesce(sum(${groups.n}), 0)::int` }).from(groups),
    database
      .select({ key: groups.key, first: groups.first })
      .from(groups)
      .orderBy(desc(groups.first), desc(groups.key))
      .limit(query.pageSize)
      .offset((query.page - 1) * query.pageSize),
    database
      .select({ code: readings.instrumentCode, name: instruments.name, count: sql<number>`count(*)::int` })
      .from(readings)
      .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
      .where(and(...waiting))
      .groupBy(readings.instrumentCode, instruments.name)
      .orderBy(readings.instrumentCode),
    database
      .select({ code: readings.analyte, count: sql<number>`count(*)::int` })
      .from(readings)
      .where(and(...waiting))
      .groupBy(readings.analyte)
      .orderBy(readings.analyte),
  ]);

  const keys = page.map((p) => p.key);
  const rows = keys.length
    ? await database
        .select({ ...readingColumns, decimals: sql<number | null>`coalesce(${readings.valueDecimals}, ${analyteSettings.decimals})`, key: specimenKey, specimenSampleId: specimens.sampleId, specimenPatientRef: specimens.patientRef })
        .from(readings)
        .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
        .leftJoin(patients, eq(patients.id, readings.patientId))
        .leftJoin(specimens, eq(specimens.id, readings.specimenId))
        .leftJoin(analyteSettings, and(eq(analyteSettings.clinicId, readings.clinicId), eq(analyteSettings.code, readings.analyte)))
        .where(and(...waiting, inArray(specimenKey, keys)))
        // A panel's readings in the order the analyzer sent them (arrival), the same on every reload.
        .orderBy(asc(readings.arrival))
    : [];
  // A waiting reading is flagged at once when it is critical for a species the clinic has limits for.
  const codes = [...new Set(rows.map((r) => r.analyte))];
  const [analytes, intervals] = codes.length
    ? await Promise.all([analyteContexts(database, actor.clinicId, codes), intervalContexts(database, actor.clinicId, codes)])
    : [new Map(), []];
  const specimensOnPage = keys.map((key) => {
    const mine = rows.filter((r) => r.key === key);
    const items = mine.map((r) => {
      const reading: Partial<typeof r> = { ...r };
      delete reading.key;
      delete reading.specimenSampleId;
      delete reading.specimenPatientRef;
      return {
        ...(reading as Omit<typeof r, 'key' | 'specimenSampleId' | 'specimenPatientRef'>),
        critical: criticalBeforeAssignment(r, analytes.get(r.analyte), intervals),
      };
    });
    const first = mine[0];
    return {
      id: key,
      instrumentCode: first.instrumentCode,
      instrumentName: first.instrumentName,
      sampleId: first.specimenSampleId ?? first.sampleId,
      patientRef: first.specimenPatientRef ?? first.patientRef,
      receivedAt: items[0].receivedAt,
      readings: items,
    };
  });
  return {
    waiting: { readings: summary.readings, specimens: summary.specimens, oldestAt: summary.oldest ? new Date(summary.oldest) : null },
    matching,
    page: query.page,
    pageSize: query.pageSize,
    pages: Math.max(1, Math.ceil(matching.specimens / query.pageSize)),
    specimens: specimensOnPage,
    facets: { instruments: instrumentFacets, analytes: analyteFacets },
  };
}
export type WaitingList = Awaited<ReturnType<typeof listWaiting>>;
export type WaitingSpecimen = WaitingList['specimens'][number];

/**
 * One reading with its audit history, oldest first. Seen from a patient's chart (`asSeenBy`), comments and
 * sign-offs written for another patient are left out (they stay with the patient they were written for).
 */
export async function getReading(actor: Actor, readingId: string, asSeenBy?: { patientId: string }) {
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
  if (asSeenBy) return { ...reading, history: await historyForPatient(actor.clinicId, readingId, asSeenBy.patientId, history) };
  return { ...reading, history };
}

/** A patient's results, as the record lists them: assigned, this clinic's; `only` narrows them further. */
function onRecord(actor: Actor, patientId: string, only?: SQL) {
  return and(eq(readings.clinicId, actor.clinicId), eq(readings.patientId, patientId), eq(readings.status, 'assigned'), only);
}
// Newest first. An instrument may print no time: such a reading sorts by when it arrived, not above everything
// (NULLS FIRST). Within one time, the order the analyzer sent them (arrival), not whatever order the rows were
// stored in; the id last makes the order total, so a page read apart from the summaries holds the same rows.
const recordOrder = () => [desc(sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`), desc(readings.receivedAt), asc(readings.arrival), asc(readings.id)];

/** A patient's assigned results whole, newest measurement first. */
export async function patientResults(actor: Actor, patientId: string) {
  const database = await db();
  const [patient] = await database
    .select({ id: patients.id })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  // A long record is hundreds of rows: they come back as one JSON document (lib/bulk-select.ts).
  return selectJsonRows(database, patientResultColumns, (select) =>
    select.from(readings).leftJoin(instruments, eq(instruments.id, readings.instrumentId)).where(onRecord(actor, patientId)).orderBy(...recordOrder()),
  );
}

/**
 * What evaluating a result needs (evaluateResult), and where it sits in the record: a long record's trend
 * reads every result this way and only its newest page whole (patientResultsPage). For 1,000 results,
 * about 60 % of the whole rows' bytes and a third of their query's time (measured on the bench data set).
 */
const resultSummaryColumns = {
  ...resultValueColumns,
  id: readings.id,
  analyte: readings.analyte,
  valueDecimals: readings.valueDecimals,
  instrumentId: readings.instrumentId,
  specimenId: readings.specimenId,
  measuredAt: readings.measuredAt,
  receivedAt: readings.receivedAt,
};
export type ResultSummary = Awaited<ReturnType<typeof patientResultSummaries>>[number];

/** Every result on the patient, newest first like patientResults, in resultSummaryColumns. The caller has checked the patient. */
export async function patientResultSummaries(actor: Actor, patientId: string) {
  const database = await db();
  return selectJsonRows(database, resultSummaryColumns, (select) => select.from(readings).where(onRecord(actor, patientId)).orderBy(...recordOrder()));
}

/** The newest `count` of the patient's results whole: the page patientResultSummaries' first `count` describe. */
export async function patientResultsPage(actor: Actor, patientId: string, count: number) {
  if (count <= 0) return [];
  const database = await db();
  return selectJsonRows(database, patientResultColumns, (select) =>
    select.from(readings).leftJoin(instruments, eq(instruments.id, readings.instrumentId)).where(onRecord(actor, patientId)).orderBy(...recordOrder()).limit(count),
  );
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
