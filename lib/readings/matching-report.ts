import 'server-only';
import { and, eq, gte, inArray, isNotNull, ne } from 'drizzle-orm';
import { db } from '@/db/client';
import { analyteSettings, clinics, instruments, labOrders, patients, readings } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { requirePermission } from '@/lib/auth/guards';
import { DEFAULT_PROTOCOLS } from '@/lib/clinical/defaults';
import { protocolSeconds } from '@/lib/clinical/protocols';
import { replayDay } from '@/lib/clinical/replay';

const DAY = 24 * 3600_000;

/**
 * The matching report: the clinic's own last 30 days replayed through today's matcher as Intake saw
 * them, against what the technicians finally kept. How often the confident suggestion was kept, and
 * every case where it was not.
 */
export async function matchingReport(actor: Actor, days = 30) {
  requirePermission(actor, 'manageClinic');
  const database = await db();
  const since = new Date(Date.now() - days * DAY);
  const [instrumentRows, orderRows, readingRows, analyteRows, clinic] = await Promise.all([
    database.select({ id: instruments.id, name: instruments.name, channels: instruments.channels }).from(instruments).where(eq(instruments.clinicId, actor.clinicId)),
    database
      .select({ id: labOrders.id, patientId: labOrders.patientId, analyte: labOrders.analyte, instrumentId: labOrders.instrumentId, sampleId: labOrders.sampleId, startedAt: labOrders.startedAt, stages: labOrders.stages, fulfilledReadingId: labOrders.fulfilledReadingId, status: labOrders.status, closedAt: labOrders.closedAt })
      .from(labOrders)
      .where(and(eq(labOrders.clinicId, actor.clinicId), gte(labOrders.startedAt, new Date(since.getTime() - DAY)))),
    database
      .select({ id: readings.id, instrumentId: readings.instrumentId, analyte: readings.analyte, sampleId: readings.sampleId, patientRef: readings.patientRef, arrivedAt: readings.receivedAt })
      .from(readings)
      .where(and(eq(readings.clinicId, actor.clinicId), gte(readings.receivedAt, since), isNotNull(readings.instrumentId), ne(readings.status, 'voided'))),
    database.select({ code: analyteSettings.code, validatedSpecies: analyteSettings.validatedSpecies }).from(analyteSettings).where(eq(analyteSettings.clinicId, actor.clinicId)),
    database.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, actor.clinicId)),
  ]);
  const patientIds = [...new Set(orderRows.map((o) => o.patientId))];
  const patientRows = patientIds.length
    ? await database.select({ id: patients.id, name: patients.name, recordNumber: patients.recordNumber, species: patients.species }).from(patients).where(inArray(patients.id, patientIds))
    : [];
  const keptBy = new Map(orderRows.filter((o) => o.fulfilledReadingId).map((o) => [o.fulfilledReadingId!, o.id]));
  const fallback = (analyte: string) => {
    const p = DEFAULT_PROTOCOLS.find((d) => d.analyte === analyte);
    return p ? protocolSeconds(p.stages) : 0;
  };
  const { scored, summary } = replayDay(
    {
      timeZone: clinic[0]?.timeZone ?? 'UTC',
      instruments: instrumentRows,
      patients: patientRows,
      // A run closed by a person (aborted, cancelled) leaves the open set when it was closed.
      orders: orderRows.map((o) => ({
        ...o,
        runSeconds: o.stages.length ? protocolSeconds(o.stages) : undefined,
        closedAt: o.status === 'aborted' || o.status === 'cancelled' ? (o.closedAt ?? o.startedAt) : null,
      })),
      readings: readingRows.map((r) => ({ ...r, instrumentId: r.instrumentId!, assignedOrderId: keptBy.get(r.id) ?? null })),
    },
    fallback,
    analyteRows,
  );
  const patientOf = new Map(orderRows.map((o) => [o.id, patientRows.find((p) => p.id === o.patientId)]));
  const arrived = new Map(readingRows.map((r) => [r.id, r.arrivedAt]));
  const who = (orderId: string | null) => {
    if (!orderId) return null;
    const p = patientOf.get(orderId);
    return { orderId, patientName: p?.name ?? 'unknown', recordNumber: p?.recordNumber ?? '' };
  };
  const confident = scored.filter((s) => s.suggestion.confident);
  const notKept = confident
    .filter((s) => s.suggestion.candidates[0].orderId !== s.kept)
    .map((s) => ({
      readingId: s.readingId,
      arrivedAt: arrived.get(s.readingId)!,
      suggested: who(s.suggestion.candidates[0].orderId),
      probability: s.suggestion.candidates[0].probability,
      kept: who(s.kept),
    }));
  return {
    since,
    days,
    readings: summary.readings,
    confident: confident.length,
    confidentKept: confident.length - notKept.length,
    askedToChoose: summary.askedToChoose,
    top1: summary.top1,
    notKept,
  };
}
