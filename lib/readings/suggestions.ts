import 'server-only';
import { and, desc, eq, gte, inArray, isNotNull, sql, type SQL } from 'drizzle-orm';
import { db, type Executor, type Tx } from '@/db/client';
import { selectJsonRows } from '@/lib/bulk-select';
import { analyteSettings, clinics, instruments, labOrders, patients, readings, runProtocols, type Bridge, type Reading } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { clinicalSettings } from '@/lib/clinical/config';
import { DEFAULT_PROTOCOLS } from '@/lib/clinical/defaults';
import { autoAssignTarget, learnTiming, suggestMatches, type MatchContext, type MatchReading, type Suggestion, type TimingModel } from '@/lib/clinical/matching';
import { protocolSeconds, type ProtocolStage } from '@/lib/clinical/protocols';
import { RECENT } from '@/lib/clinical/replay';
import { ApiError, notFound } from '@/lib/http';
import { loadPatientForPlacement, placeReading } from './placement';

/**
 * A run's full duration: the stages copied onto the order when it started, else its protocol's, else the
 * built-in protocol for the test.
 */
const runSecondsOf = (analyte: string, ...candidates: (ProtocolStage[] | null | undefined)[]) => {
  const stages = candidates.find((c) => c && c.length > 0);
  if (stages) return protocolSeconds(stages);
  const fallback = DEFAULT_PROTOCOLS.find((p) => p.analyte === analyte);
  return fallback ? protocolSeconds(fallback.stages) : 0;
};

const HOUR = 3600_000;

/**
 * The clinic's timing (how early or late readings arrive against the due time), learned from its latest
 * confirmed matches. The one estimate: the matcher weighs readings with it and the Bench judges an
 * overdue run "probably aborted" with it.
 */
export async function clinicTiming(tx: Executor, clinicId: string): Promise<TimingModel> {
  const history = await tx
    .select({ analyte: labOrders.analyte, startedAt: labOrders.startedAt, arrivedAt: readings.receivedAt, copied: labOrders.stages, stages: runProtocols.stages })
    .from(labOrders)
    .innerJoin(readings, eq(readings.id, labOrders.fulfilledReadingId))
    .leftJoin(runProtocols, eq(runProtocols.id, labOrders.protocolId))
    .where(and(eq(labOrders.clinicId, clinicId), eq(labOrders.status, 'fulfilled'), gte(labOrders.fulfilledAt, new Date(Date.now() - 30 * 24 * HOUR))))
    .orderBy(desc(labOrders.fulfilledAt))
    .limit(RECENT);
  return learnTiming(history.map((h) => (h.arrivedAt.getTime() - h.startedAt.getTime()) / 1000 - runSecondsOf(h.analyte, h.copied, h.stages)));
}

/**
 * Loads what the matcher needs for readings of these analytes: open orders (with their protocol's
 * duration), their patients, instruments, analytes, the readings placed in the last 12 h (a reader was
 * busy until each) and the clinic's timing (clinicTiming).
 */
async function matchContext(tx: Executor, clinicId: string, analytes: string[], namedIds: string[]): Promise<MatchContext> {
  const [orders, instrumentRows, analyteRows, clinic, placedRows, timing] = await Promise.all([
    tx
      // The columns the matcher reads (see the return below), not the whole order.
      .select({
        order: {
          id: labOrders.id,
          patientId: labOrders.patientId,
          analyte: labOrders.analyte,
          instrumentId: labOrders.instrumentId,
          sampleId: labOrders.sampleId,
          startedAt: labOrders.startedAt,
          stages: labOrders.stages,
          status: labOrders.status,
        },
        stages: runProtocols.stages,
      })
      .from(labOrders)
      .leftJoin(runProtocols, eq(runProtocols.id, labOrders.protocolId))
      .where(and(eq(labOrders.clinicId, clinicId), eq(labOrders.status, 'open'), inArray(labOrders.analyte, analytes.length ? analytes : ['']))),
    tx
      .select({ id: instruments.id, name: instruments.name, channels: instruments.channels, analytes: instruments.analytes })
      .from(instruments)
      .where(eq(instruments.clinicId, clinicId)),
    tx
      .select({ code: analyteSettings.code, validatedSpecies: analyteSettings.validatedSpecies })
      .from(analyteSettings)
      .where(eq(analyteSettings.clinicId, clinicId)),
    tx.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, clinicId)),
    tx
      .select({ instrumentId: readings.instrumentId, arrivedAt: readings.receivedAt, startedAt: labOrders.startedAt })
      .from(readings)
      .leftJoin(labOrders, eq(labOrders.fulfilledReadingId, readings.id))
      .where(
        and(
          eq(readings.clinicId, clinicId),
          eq(readings.status, 'assigned'),
          isNotNull(readings.instrumentId),
          gte(readings.receivedAt, new Date(Date.now() - 12 * HOUR)),
        ),
      ),
    clinicTiming(tx, clinicId),
  ]);
  const patientIds = [...new Set(orders.map((o) => o.order.patientId))];
  const lowerIds = [...new Set(namedIds.map((id) => id.trim().toLowerCase()).filter(Boolean))];
  // Patients with an open order, plus any whose record number is printed on a reading: chosen in SQL
  // (indexed), never by loading every patient of the clinic into JavaScript. Two lookups, not one with OR:
  // each uses its own index and plans in a fraction of a millisecond; the OR of two long lists planned in
  // 2–3 ms and cost 4–14 ms in all (measured on the bench data set).
  const wantedBy = (condition: SQL) =>
    tx
      .select({ id: patients.id, name: patients.name, recordNumber: patients.recordNumber, species: patients.species })
      .from(patients)
      .where(and(eq(patients.clinicId, clinicId), eq(patients.active, true), condition));
  const [byOrder, byRecordNumber] = await Promise.all([
    patientIds.length ? wantedBy(inArray(patients.id, patientIds)) : [],
    lowerIds.length ? wantedBy(inArray(sql`lower(${patients.recordNumber})`, lowerIds)) : [],
  ]);
  // One entry per patient, in a fixed order (the matcher breaks ties by record number too).
  const wanted = [...new Map([...byOrder, ...byRecordNumber].map((p) => [p.id, p])).values()].sort((a, b) => a.recordNumber.localeCompare(b.recordNumber));
  return {
    orders: orders.map(({ order, stages }) => ({
      id: order.id,
      patientId: order.patientId,
      analyte: order.analyte,
      instrumentId: order.instrumentId,
      sampleId: order.sampleId,
      startedAt: order.startedAt,
      runSeconds: runSecondsOf(order.analyte, order.stages, stages),
      status: order.status,
    })),
    // Patients with an open order, plus any whose record number is printed on a reading.
    patients: wanted,
    instruments: instrumentRows,
    analytes: analyteRows,
    placed: placedRows.flatMap((p) => (p.instrumentId ? [{ instrumentId: p.instrumentId, arrivedAt: p.arrivedAt, startedAt: p.startedAt }] : [])),
    timing,
    now: new Date(),
    timeZone: clinic[0]?.timeZone ?? 'UTC',
  };
}

const matchFields = { id: readings.id, analyte: readings.analyte, instrumentId: readings.instrumentId, sampleId: readings.sampleId, patientRef: readings.patientRef, receivedAt: readings.receivedAt };
const toMatchReading = (r: Pick<Reading, keyof typeof matchFields>): MatchReading => ({
  id: r.id,
  analyte: r.analyte,
  instrumentId: r.instrumentId,
  sampleId: r.sampleId,
  patientRef: r.patientRef,
  arrivedAt: r.receivedAt,
});

type AnalyteInfo = { code: string; validatedSpecies: string[] } | null;

/** The suggestion for one unassigned reading, weighed together with the other waiting readings. */
export async function suggestionsFor(actor: Actor, readingId: string): Promise<{ readingId: string; suggestion: Suggestion; analyte: AnalyteInfo }> {
  const database = await db();
  const [reading] = await database
    .select()
    .from(readings)
    .where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId)));
  if (!reading) throw notFound('The reading');
  const empty: Suggestion = { readingId, candidates: [], noneProbability: 1, confident: false };
  if (reading.status !== 'unassigned') {
    const [analyte] = await database
      .select({ code: analyteSettings.code, validatedSpecies: analyteSettings.validatedSpecies })
      .from(analyteSettings)
      .where(and(eq(analyteSettings.clinicId, actor.clinicId), eq(analyteSettings.code, reading.analyte)));
    return { readingId, suggestion: empty, analyte: analyte ?? null };
  }
  const { ranked, context } = await rankWaiting(actor.clinicId, [reading.analyte], [readingId]);
  const analyte = context?.analytes.find((a) => a.code === reading.analyte) ?? null;
  return { readingId, suggestion: ranked.get(readingId) ?? empty, analyte };
}

/** Every waiting reading of these analytes (all when none given), weighed together; suggestions for `shown` (all when not given). */
async function rankWaiting(clinicId: string, analytes?: string[], shown?: readonly string[], top?: number) {
  const database = await db();
  const conditions = [eq(readings.clinicId, clinicId), eq(readings.status, 'unassigned')];
  if (analytes) conditions.push(inArray(readings.analyte, analytes));
  // Only what the matcher reads, not whole rows (a raw printout each), as one JSON document.
  const waiting = await selectJsonRows(database, matchFields, (select) => select.from(readings).where(and(...conditions)).orderBy(desc(readings.receivedAt)).limit(200));
  if (!waiting.length) return { ranked: new Map<string, Suggestion>(), context: null };
  const context = await matchContext(
    database,
    clinicId,
    [...new Set(waiting.map((r) => r.analyte))],
    waiting.flatMap((r) => [r.sampleId, r.patientRef]).filter((x): x is string => !!x),
  );
  return { ranked: suggestMatches(waiting.map(toMatchReading), context, { only: shown ? new Set(shown) : undefined, top }), context };
}

/**
 * The top few candidates for the unassigned readings Intake shows (`shown`; every one when not given), for
 * the board in one request. All waiting readings are weighed together either way: one run gives one reading.
 */
export async function suggestionsForUnassigned(actor: Actor, perReading = 3, shown?: readonly string[]): Promise<Record<string, Suggestion>> {
  const { ranked } = await rankWaiting(actor.clinicId, undefined, shown, perReading);
  return Object.fromEntries(ranked);
}

/**
 * The clinic's opt-in rule, applied inside the ingest transaction to a batch's new readings: a reading
 * whose exact sample ID (or record number) names exactly one open order goes on that order's patient.
 * Off unless switched on. The setting and the open orders are looked up once for the whole batch.
 */
export async function autoAssignBatchOnIngest(tx: Tx, bridge: Bridge, created: Pick<Reading, 'id' | 'sampleId' | 'patientRef'>[]): Promise<number> {
  const namedIds = created.filter((r) => r.sampleId || r.patientRef).map((r) => r.id);
  if (!namedIds.length) return 0;
  const settings = await clinicalSettings(tx, bridge.clinicId);
  if (!settings.autoAssignExactId) return 0;
  // The whole rows only when the rule is on: ingest stores a batch without reading it back. In the batch's order.
  const order = new Map(namedIds.map((id, i) => [id, i]));
  const named = (await tx.select().from(readings).where(inArray(readings.id, namedIds))).sort((a, b) => order.get(a.id)! - order.get(b.id)!);
  const context = await matchContext(
    tx,
    bridge.clinicId,
    [...new Set(named.map((r) => r.analyte))],
    named.flatMap((r) => [r.sampleId, r.patientRef]).filter((x): x is string => !!x),
  );
  let placed = 0;
  for (const reading of named) {
    const target = autoAssignTarget({ ...context, reading: toMatchReading(reading) });
    if (!target) continue;
    try {
      // A savepoint: if the order was taken meanwhile, the reading stays in Intake and the upload still succeeds.
      await tx.transaction(async (sp) => {
        const patient = await loadPatientForPlacement(sp, bridge.clinicId, target.patientId);
        await placeReading(sp, { clinicId: bridge.clinicId, userId: null, bridgeId: bridge.id }, reading, patient, {
          orderId: target.orderId,
          method: 'auto-sample-id',
          details: { rule: 'exact sample ID to one open order (clinic setting)', reason: target.reason },
        });
      });
      placed += 1;
      // As a fresh lookup would now see it: that order has its reading.
      context.orders = context.orders.filter((o) => o.id !== target.orderId);
    } catch (error) {
      if (!(error instanceof ApiError)) throw error;
    }
  }
  return placed;
}
