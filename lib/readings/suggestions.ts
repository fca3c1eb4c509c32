import 'server-only';
import { and, eq, inArray } from 'drizzle-orm';
import { db, type Executor, type Tx } from '@/db/client';
import { analyteSettings, clinics, instruments, labOrders, patients, readings, runProtocols, type Bridge, type Reading } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { clinicalSettings } from '@/lib/clinical/config';
import { autoAssignTarget, rankCandidates, type Candidate, type MatchInput } from '@/lib/clinical/matching';
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
  const patientRows = await tx
    .select({ id: patients.id, name: patients.name, recordNumber: patients.recordNumber, species: patients.species })
    .from(patients)
    .where(and(eq(patients.clinicId, clinicId), eq(patients.active, true)));
  // Patients with an open order, plus any whose record number is printed on a reading.
  const wanted = patientRows.filter((p) => patientIds.includes(p.id) || lowerIds.includes(p.recordNumber.toLowerCase()));
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

/** Ranked candidates for one unassigned reading, with reasons. */
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
  const context = await matchContext(database, actor.clinicId, [reading.analyte], [reading.sampleId, reading.patientRef].filter((x): x is string => !!x));
  const analyte = context.analytes.find((a) => a.code === reading.analyte) ?? null;
  if (reading.status !== 'unassigned') return { readingId, candidates: [], analyte };
  return { readingId, candidates: rankCandidates(inputFor(reading, context)), analyte };
}

/** The top few candidates for every unassigned reading, for the Intake board in one request. */
export async function suggestionsForUnassigned(actor: Actor, perReading = 3) {
  const database = await db();
  const waiting = await database
    .select()
    .from(readings)
    .where(and(eq(readings.clinicId, actor.clinicId), eq(readings.status, 'unassigned')))
    .limit(200);
  if (!waiting.length) return {};
  const context = await matchContext(
    database,
    actor.clinicId,
    [...new Set(waiting.map((r) => r.analyte))],
    waiting.flatMap((r) => [r.sampleId, r.patientRef]).filter((x): x is string => !!x),
  );
  return Object.fromEntries(waiting.map((r) => [r.id, rankCandidates(inputFor(r, context)).slice(0, perReading)]));
}

/**
 * The clinic's opt-in rule, applied inside the ingest transaction: a reading whose exact sample ID (or
 * record number) names exactly one open order goes on that order's patient. Off unless switched on.
 */
export async function autoAssignOnIngest(tx: Tx, bridge: Bridge, reading: Reading): Promise<boolean> {
  if (!reading.sampleId && !reading.patientRef) return false;
  const settings = await clinicalSettings(tx, bridge.clinicId);
  if (!settings.autoAssignExactId) return false;
  const context = await matchContext(tx, bridge.clinicId, [reading.analyte], [reading.sampleId, reading.patientRef].filter((x): x is string => !!x));
  const target = autoAssignTarget(inputFor(reading, context));
  if (!target) return false;
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
    return true;
  } catch (error) {
    if (error instanceof ApiError) return false;
    throw error;
  }
}
