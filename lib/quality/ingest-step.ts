import 'server-only';
import { eq } from 'drizzle-orm';
import type { Tx } from '@/db/client';
import { readings, type Reading } from '@/db/schema';
import { recordAudits } from '@/lib/audit';
import { publishBatch } from '@/lib/live/bus';
import { compileLinePattern } from '@/lib/validation/pattern';
import { isExpiredOn, localDay } from './kits';
import { evaluateGroups, inControlUnits, qcReadings, type QcReadingRow } from './qc';
import { activeControlMaterials, clinicClock, loadedLots, pickControlMaterial } from './store';

// The lab-quality step of ingest, run on each new reading before anything may place it:
//  1. QC recognition: the analyzer marked the specimen as a control (ASTM, HL7, or a printout profile's
//     control line), or the sample ID matches the clinic's QC pattern → status 'control' (never Intake,
//     never a patient) with its control material when known (by sample ID, else by the printed level).
//  2. The kit lot loaded in the instrument for the analyte is recorded (the run used one of its tests);
//     a lot past its expiry date on the day of the run marks the reading 'kit-expired'.
//  3. A patient reading of an analyte whose latest QC run on that instrument was rejected is marked 'qc-failed'.
// A bridge's batch is decided as a whole before it is stored (the marks go into the INSERT), with the
// lookups made once per batch; the readings are judged in the batch's order, so a control run earlier in
// the batch counts for the patient readings after it, as when each reading was stored and checked in turn.

import type { QualityMark } from './labels';

// Compiled once per pattern, not per reading (a clinic has one; a server of a clinic group a few).
const compiledQcPatterns = new Map<string, ReturnType<typeof compileLinePattern>>();

export function isQcSampleId(sampleId: string | null, pattern: string): boolean {
  if (!sampleId || !pattern) return false;
  // The clinic's own pattern runs in the linear-time engine, like printout profiles.
  let compiled = compiledQcPatterns.get(pattern);
  if (!compiled) {
    if (compiledQcPatterns.size >= 64) compiledQcPatterns.clear();
    compiled = compileLinePattern(pattern, { ignoreCase: true });
    compiledQcPatterns.set(pattern, compiled);
  }
  return compiled.ok && compiled.pattern.test(sampleId);
}

/** How the analyzer marked the specimen, and the control level a printout profile's control line printed. */
type SpecimenRole = { specimenRole?: 'patient' | 'control'; controlLevel?: string };

/** What the lab-quality step needs of a new reading; all known before it is stored (ingest makes the id). */
export type QualityInput = Pick<Reading, 'id' | 'instrumentId' | 'analyte' | 'value' | 'unit' | 'sampleId' | 'measuredAt' | 'receivedAt'> & SpecimenRole;

/** The columns the step sets on a new reading, and how it was known to be a control run when it is one. */
export interface QualityDecision {
  kitLotId: string | null;
  qualityMarks: QualityMark[];
  control: { controlMaterialId: string | null; how: 'analyzer' | 'sample-id pattern'; level: string | null } | null;
}

/** A record the step did not decide on (stored meanwhile by another upload, which checked it): no marks. */
export const NO_QUALITY: QualityDecision = { kitLotId: null, qualityMarks: [], control: null };

const pair = (analyte: string, instrumentId: string | null) => `${analyte}|${instrumentId ?? ''}`;

/**
 * The lab-quality step for new readings of one clinic, in their order: one decision per input. The clinic's
 * settings, the loaded lots, the QC history and (for control runs) the control materials are read once.
 */
export async function decideQuality(tx: Tx, clinicId: string, inputs: readonly QualityInput[]): Promise<QualityDecision[]> {
  if (!inputs.length) return [];
  const { timeZone, settings } = await clinicClock(tx, clinicId);
  const isControl = inputs.map((r) => r.specimenRole === 'control' || isQcSampleId(r.sampleId, settings.qcSampleIdPattern));
  const lots = await loadedLots(
    tx,
    clinicId,
    inputs.filter((r): r is QualityInput & { instrumentId: string } => r.instrumentId !== null),
  );
  const controlAnalytes = inputs.filter((_, i) => isControl[i]).map((r) => r.analyte);
  const materials = await activeControlMaterials(tx, clinicId, controlAnalytes);
  // QC history per analyte and instrument (oldest first), for the analytes patient readings need; a control
  // run of this batch joins its history once decided, as a stored control run would.
  const patientAnalytes = [...new Set(inputs.filter((_, i) => !isControl[i]).map((r) => r.analyte))];
  const history = new Map<string, QcReadingRow[]>();
  if (patientAnalytes.length) {
    for (const row of await qcReadings(tx, clinicId, { analytes: patientAnalytes })) {
      const list = history.get(pair(row.analyte, row.instrumentId));
      if (list) list.push(row);
      else history.set(pair(row.analyte, row.instrumentId), [row]);
    }
  }
  const status = new Map<string, string>();
  const qcStatus = (analyte: string, instrumentId: string | null) => {
    const key = pair(analyte, instrumentId);
    if (!status.has(key)) status.set(key, evaluateGroups(history.get(key) ?? [])[0]?.status ?? 'none');
    return status.get(key);
  };

  return inputs.map((row, i) => {
    const lot = row.instrumentId ? (lots.get(`${row.instrumentId}|${row.analyte}`) ?? null) : null;
    const qualityMarks: QualityMark[] = [];
    if (lot && isExpiredOn(lot.expiresOn, localDay(row.measuredAt ?? row.receivedAt, timeZone))) qualityMarks.push('kit-expired');
    if (!isControl[i]) {
      if (qcStatus(row.analyte, row.instrumentId) === 'rejected') qualityMarks.push('qc-failed');
      return { kitLotId: lot?.id ?? null, qualityMarks, control: null };
    }
    const level = row.controlLevel ?? null;
    const material = pickControlMaterial(materials, { ...row, level });
    const key = pair(row.analyte, row.instrumentId);
    // Only runs with a material, a number and a unit that converts to the control's are QC history (as qcReadings reads it).
    const at = row.measuredAt ?? row.receivedAt;
    const [entry]: QcReadingRow[] =
      material && row.value !== null && patientAnalytes.includes(row.analyte)
        ? inControlUnits([
            { id: row.id, analyte: row.analyte, instrumentId: row.instrumentId, value: row.value, unit: row.unit, controlUnit: material.unit, at, materialId: material.id, level: material.level, mean: material.targetMean, sd: material.targetSd },
          ]).comparable
        : [];
    if (entry) {
      const list = history.get(key) ?? [];
      // After every run at or before its time: stored runs came first, and it was stored last.
      const index = list.findIndex((r) => r.at.getTime() > at.getTime());
      list.splice(index === -1 ? list.length : index, 0, entry);
      history.set(key, list);
      status.delete(key);
    }
    return {
      kitLotId: lot?.id ?? null,
      qualityMarks,
      control: { controlMaterialId: material?.id ?? null, how: row.specimenRole === 'control' ? 'analyzer' : 'sample-id pattern', level },
    };
  });
}

/** The reading columns a decision sets on a reading stored already (a control run leaves Intake). */
export function qualityColumns(decision: QualityDecision) {
  return {
    kitLotId: decision.kitLotId,
    qualityMarks: decision.qualityMarks,
    ...(decision.control ? { status: 'control' as const, controlMaterialId: decision.control.controlMaterialId } : {}),
  };
}

/** The same for a new reading's INSERT: every column set, so a batch's rows all have the same shape. */
export function qualityColumnsOnArrival(decision: QualityDecision) {
  return {
    kitLotId: decision.kitLotId,
    qualityMarks: decision.qualityMarks,
    status: decision.control ? ('control' as const) : ('unassigned' as const),
    controlMaterialId: decision.control?.controlMaterialId ?? null,
  };
}

/** Once stored: each control run's audit event, and one announcement for the readings the step marked. */
export async function recordQuality(
  tx: Tx,
  /** The bridge that sent them, or the administrator who imported them from a capture file. */
  by: { clinicId: string; actorBridgeId?: string | null; actorUserId?: string | null },
  stored: readonly { reading: Pick<Reading, 'id'>; decision: QualityDecision }[],
): Promise<void> {
  await recordAudits(
    tx,
    stored.flatMap(({ reading, decision }) =>
      decision.control
        ? [
            {
              clinicId: by.clinicId,
              actorBridgeId: by.actorBridgeId ?? null,
              actorUserId: by.actorUserId ?? null,
              action: 'reading.marked-control',
              entityType: 'reading',
              entityId: reading.id,
              details: {
                how: decision.control.how,
                controlMaterialId: decision.control.controlMaterialId,
                ...(decision.control.level ? { level: decision.control.level } : {}),
              },
            },
          ]
        : [],
    ),
  );
  const marked = stored.filter(({ decision }) => decision.control || decision.qualityMarks.length);
  await publishBatch(tx, { type: 'quality.updated', clinicId: by.clinicId }, marked.map(({ reading }) => reading.id));
}

/** The step for one reading already stored (a transcribed result): decided, set on the row, recorded. */
export async function applyQualityOnIngest(
  tx: Tx,
  row: Reading,
  payload: SpecimenRole,
  /** The administrator who imported it from a capture file (no bridge sent it). */
  importedBy?: string,
): Promise<Reading> {
  const [decision] = await decideQuality(tx, row.clinicId, [{ ...row, ...payload }]);
  if (!decision.control && !decision.kitLotId && decision.qualityMarks.length === 0) return row;
  const [updated] = await tx.update(readings).set(qualityColumns(decision)).where(eq(readings.id, row.id)).returning();
  await recordQuality(tx, { clinicId: row.clinicId, ...(importedBy ? { actorUserId: importedBy } : { actorBridgeId: row.bridgeId }) }, [{ reading: updated, decision }]);
  return updated;
}
