import 'server-only';
import { and, asc, eq, gte, isNull, lt, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { clinics, instruments, patients, readings, resultAssignments, resultReviews, staffUsers } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import type { Actor } from '@/lib/auth/guards';
import { analyteContexts, intervalContexts } from '@/lib/clinical/config';
import { evaluateResult, qualitativeFlag } from '@/lib/clinical/evaluate';
import { FLAG_CODE } from '@/lib/clinical/flags';
import { toCsv } from '@/lib/csv';
import { ApiError, notFound } from '@/lib/http';
import type { ExportQuery } from '@/lib/validation/reports';
import { resultValueColumns } from '@/lib/readings/queries';

const MAX_ROWS = 50_000;

export const EXPORT_HEADER = [
  'record_number',
  'patient',
  'species',
  'test',
  'value',
  'comparator',
  'unit',
  'flag',
  'interval_low',
  'interval_high',
  'measured_at',
  'instrument',
  'result_status',
  'reviewed_by',
  'reviewed_at',
  // A coded or text result (added after the first columns, so existing readers of the file keep working).
  'result_code',
  'result_display',
  'result_code_system',
  'result_text',
  'notes',
];

/** The UTC instant a calendar day starts in a time zone (the offset found by formatting, no library). */
export function startOfDayIn(day: string, timeZone: string): Date {
  const utcMidnight = new Date(`${day}T00:00:00Z`);
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit' }).formatToParts(utcMidnight);
  const get = (t: string) => Number(parts.find((p) => p.type === t)!.value);
  const asLocal = Date.UTC(get('year'), get('month') - 1, get('day'), get('hour'), get('minute'), get('second'));
  const offset = asLocal - utcMidnight.getTime();
  return new Date(utcMidnight.getTime() - offset);
}

/**
 * Results on patients' records as CSV, for a date range (clinic days, inclusive) and/or one patient.
 * Values are in the clinic's display unit with the flag against the species' interval. Audited.
 */
export async function exportResultsCsv(actor: Actor, query: ExportQuery) {
  const database = await db();
  const [clinic] = await database.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, actor.clinicId));
  if (query.patientId) {
    const [p] = await database.select({ id: patients.id }).from(patients).where(and(eq(patients.id, query.patientId), eq(patients.clinicId, actor.clinicId)));
    if (!p) throw notFound('The patient');
  }
  const measured = sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`;
  const from = query.from ? startOfDayIn(query.from, clinic.timeZone) : null;
  const toExclusive = query.to ? startOfDayIn(nextDay(query.to), clinic.timeZone) : null;
  const signedOff = database
    .select({ assignmentId: resultReviews.assignmentId, at: sql<Date>`min(${resultReviews.at})`.as('signed_at'), reviewerId: sql<string>`(array_agg(${resultReviews.reviewerId} order by ${resultReviews.at}))[1]`.as('reviewer_id') })
    .from(resultReviews)
    .where(eq(resultReviews.kind, 'reviewed'))
    .groupBy(resultReviews.assignmentId)
    .as('signed_off');
  const rows = await database
    .select({
      id: readings.id,
      analyte: readings.analyte,
      ...resultValueColumns,
      measuredAt: readings.measuredAt,
      receivedAt: readings.receivedAt,
      instrumentId: readings.instrumentId,
      instrumentName: instruments.name,
      instrumentCode: readings.instrumentCode,
      resultStatus: readings.resultStatus,
      recordNumber: patients.recordNumber,
      patientName: patients.name,
      species: patients.species,
      reviewedAt: signedOff.at,
      reviewerName: staffUsers.displayName,
    })
    .from(readings)
    .innerJoin(resultAssignments, and(eq(resultAssignments.readingId, readings.id), isNull(resultAssignments.endedAt)))
    .innerJoin(patients, eq(patients.id, readings.patientId))
    .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
    .leftJoin(signedOff, eq(signedOff.assignmentId, resultAssignments.id))
    .leftJoin(staffUsers, eq(staffUsers.id, signedOff.reviewerId))
    .where(
      and(
        eq(readings.clinicId, actor.clinicId),
        eq(readings.status, 'assigned'),
        query.patientId ? eq(readings.patientId, query.patientId) : undefined,
        from ? gte(measured, from) : undefined,
        toExclusive ? lt(measured, toExclusive) : undefined,
      ),
    )
    .orderBy(asc(measured), asc(readings.id))
    .limit(MAX_ROWS + 1);
  if (rows.length > MAX_ROWS) throw new ApiError(413, 'too_many_rows', `More than ${MAX_ROWS} results match; choose a shorter date range.`);
  const codes = [...new Set(rows.map((r) => r.analyte))];
  const [analytes, intervals] = await Promise.all([analyteContexts(database, actor.clinicId, codes), intervalContexts(database, actor.clinicId, codes)]);
  const lines = rows.map((r) => {
    const e = evaluateResult(r, { name: r.patientName, species: r.species }, analytes.get(r.analyte), intervals);
    // The interval comes in the display unit, like the value.
    const interval = { low: e.interval?.low ?? null, high: e.interval?.high ?? null };
    return [
      r.recordNumber,
      r.patientName,
      r.species,
      r.analyte,
      e.display.value,
      e.display.comparator,
      e.display.unit,
      // A coded or text result: A (abnormal) or N (normal) when the analyzer's flag or the clinic's rule says.
      e.flag ? `${FLAG_CODE[e.flag.flag]}${e.flag.certain ? '' : '?'}` : qualitativeFlag(e.qualitative),
      interval.low,
      interval.high,
      new Date(r.measuredAt ?? r.receivedAt).toISOString(),
      r.instrumentName ?? r.instrumentCode,
      r.resultStatus,
      r.reviewerName,
      r.reviewedAt ? new Date(r.reviewedAt).toISOString() : null,
      r.valueCode?.code ?? null,
      r.valueCode?.display ?? null,
      r.valueCode?.system ?? null,
      r.valueText,
      r.notes.length ? r.notes.join(' | ') : null,
    ];
  });
  await database.transaction(async (tx) => {
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'results.exported',
      entityType: query.patientId ? 'patient' : 'clinic',
      entityId: query.patientId ?? actor.clinicId,
      details: { from: query.from ?? null, to: query.to ?? null, rows: lines.length, format: 'csv' },
    });
  });
  return { csv: toCsv(EXPORT_HEADER, lines), rows: lines.length };
}

function nextDay(day: string): string {
  const d = new Date(`${day}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() + 1);
  return d.toISOString().slice(0, 10);
}

