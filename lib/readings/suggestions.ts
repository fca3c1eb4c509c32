import 'server-only';
import { and, eq, inArray, or, sql } from 'drizzle-orm';
import { db, type Executor, type Tx } from '@/db/client';
import { analyteSettings, clinics, instruments, labOrders, patients, readings, runProtocols, type Bridge, type Reading } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { clinicalSettings } from '@/lib/clinical/config';
import { autoAssignTarget, rankWaitingReadings, type Candidate, type MatchInput } from '@/lib/clinical/matching';
import { ApiError, notFound } from '@/lib/http';
import { loadPatientForPlacement, placeReading } from './placement';

const DEFAULT_EARLY = 60;
const DEFAULT_LATE = 180;

/** Loads what the ranking needs for readings of these analytes: open orders, their patients, instruments, analytes. */
async function matchContext(tx: Executor, clinicId: string, analytes: string[], namedIds: string[]) {
  const [orders, instrumentRows, analyteRows, clinic] = await Promise.all([
    tx
      .select({ order: labOrders, earlySeconds: runProtocols.earlySeconds, lateSeconds: runProtocols.lateSeconds })
      .from(labOrders)
      .leftJoin(runProtocols, eq(runProtocols.id, labOrders.protocolId))
      .where(and(eq(labOrders.clinicId, clinicId), eq(labOrders.status, 'open'), inArray(labOrders.analyte, analytes.length ? analytes : ['']))),
    tx.select({ id: instruments.id, name: instruments.name, channels: instruments.channels }).from(instruments).where(eq(instruments.clinicId, clinicId)),
    tx
      .select({ code: analyteSettings.code, validatedSpecies: analyteSettings.validatedSpecies })
      .from(analyteSettings)
      .where(eq(analyteSettings.clinicId, clinicId)),
    tx.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, clinicId)),
  ]);
  const patientIds = [...new Set(orders.map((o) => o.order.patientId))];
  const lowerIds = [...new Set(namedIds.map((id) => id.trim().toLowerCase()).filter(Boolean))];
  // Patients with an open order, plus any whose record number is printed on a reading: chosen in SQL
  // (indexed), never by loading every patient of the clinic into JavaScript.
  const named = [
    patientIds.length ? inArray(patients.id, patientIds) : undefined,
    lowerIds.length ? inArray(sql`lower(${patients.recordNumber})`, lowerIds) : undefined,
  ].filter((c) => c !== undefined);
  const wanted = named.length
    ? await tx
        .select({ id: patients.id, name: patients.name, recordNumber: patients.recordNumber, species: patients.species })
        .from(patients)
        .where(and(eq(patients.clinicId, clinicId), eq(patients.active, true), or(...named)))
    : [];
  return {
    orders: orders.map(({ order, earlySeconds, lateSeconds }) => ({
      ...order,
      earlySeconds: earlySeconds ?? DEFAULT_EARLY,
      lateSeconds: lateSeconds ?? DEFAULT_LATE,
    })),
    patients: wanted,
    instruments: instrumentRows,
    analytes: analyteRows,
    timeZone: clinic[0]?.timeZone ?? 'UTC',
  };
}

const toMatchReading = (r: Pick<Reading, 'id' | 'analyte' | 'instrumentId' | 'sampleId' | 'patientRef' | 'receivedAt'>) => ({
  id: r.id,
  analyte: r.analyte,
  instrumentId: r.instrumentId,
  sampleId: r.sampleId,
  patientRef: r.patientRef,
  arrivedAt: r.receivedAt,
});

function inputFor(reading: Parameters<typeof toMatchReading>[0], context: Awaited<ReturnType<typeof matchContext>>): MatchInput {
  return { reading: toMatchReading(reading), ...context };
}

/** Ranked candidates for one unassigned reading, weighed against the other waiting readings. */
export async function suggestionsFor(
  actor: Actor,
  readingId: string,
): Promise<{ readingId: string; candidates: Candidate[]; analyte: { code: string; validatedSpecies: string[] } | null }> {
  const database = await db();
  const [reading] = await database
    .select()
    .from(readings)
    .where(and(eq(readings.id, readingId), eq(readings.clinicId, actor.clinicId)));
  if (!reading) throw notFound('The reading');
  if (reading.status !== 'unassigned') {
    const context = await matchContext(database, actor.clinicId, [reading.analyte], []);
    return { readingId, candidates: [], analyte: context.analytes.find((a) => a.code === reading.analyte) ?? null };
  }
  const { ranked, context } = await rankWaiting(actor.clinicId, [reading.analyte]);
  const analyte = context?.analytes.find((a) => a.code === reading.analyte) ?? null;
  return { readingId, candidates: ranked.get(readingId) ?? [], analyte };
}

/** Every waiting reading of these analytes (all when none given), ranked together. */
async function rankWaiting(clinicId: string, analytes?: string[]) {
  const database = await db();
  const conditions = [eq(readings.clinicId, clinicId), eq(readings.status, 'unassigned')];
  if (analytes) conditions.push(inArray(readings.analyte, analytes));
  const waiting = await database.select().from(readings).where(and(...conditions)).limit(200);
  if (!waiting.length) return { ranked: new Map<string, Candidate[]>(), context: null };
  const context = await matchContext(
    database,
    clinicId,
    [...new Set(waiting.map((r) => r.analyte))],
    waiting.flatMap((r) => [r.sampleId, r.patientRef]).filter((x): x is string => !!x),
  );
  return { ranked: rankWaitingReadings(waiting.map(toMatchReading), context), context };
}

/** The top few candidates for every unassigned reading, for the Intake board in one request. */
export async function suggestionsForUnassigned(actor: Actor, perReading = 3) {
  const { ranked } = await rankWaiting(actor.clinicId);
  return Object.fromEntries([...ranked].map(([id, candidates]) => [id, candidates.slice(0, perReading)]));
}

/**
 * The clinic's opt-in rule, applied inside the ingest transaction to a batch's new readings: a reading
 * whose exact sample ID (or record number) names exactly one open order goes on that order's patient.
 * Off unless switched on. The setting and the open orders are looked up once for the whole batch.
 */
export async function autoAssignBatchOnIngest(tx: Tx, bridge: Bridge, created: Reading[]): Promise<number> {
  const named = created.filter((r) => r.sampleId || r.patientRef);
  if (!named.length) return 0;
  const settings = await clinicalSettings(tx, bridge.clinicId);
  if (!settings.autoAssignExactId) return 0;
  const context = await matchContext(
    tx,
    bridge.clinicId,
    [...new Set(named.map((r) => r.analyte))],
    named.flatMap((r) => [r.sampleId, r.patientRef]).filter((x): x is string => !!x),
  );
  let placed = 0;
  for (const reading of named) {
    const target = autoAssignTarget(inputFor(reading, context));
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
