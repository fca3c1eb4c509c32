import 'server-only';
import { eq } from 'drizzle-orm';
import type { Tx } from '@/db/client';
import { readings, type Reading } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { publish } from '@/lib/live/bus';
import { compileLinePattern } from '@/lib/validation/pattern';
import { isExpiredOn, localDay } from './kits';
import { qcStatusFor } from './qc';
import { clinicClock, loadedLot, matchControlMaterial } from './store';

// The lab-quality step of ingest, run on each newly stored reading before anything may place it:
//  1. QC recognition: the analyzer marked the specimen as a control (ASTM, HL7, or a printout profile's
//     control line), or the sample ID matches the clinic's QC pattern → status 'control' (never Intake,
//     never a patient) with its control material when known (by sample ID, else by the printed level).
//  2. The kit lot loaded in the instrument for the analyte is recorded (the run used one of its tests);
//     a lot past its expiry date on the day of the run marks the reading 'kit-expired'.
//  3. A patient reading of an analyte whose latest QC run on that instrument was rejected is marked 'qc-failed'.

import type { QualityMark } from './labels';

export function isQcSampleId(sampleId: string | null, pattern: string): boolean {
  if (!sampleId || !pattern) return false;
  // The clinic's own pattern runs in the linear-time engine, like printout profiles.
  const compiled = compileLinePattern(pattern, { ignoreCase: true });
  return compiled.ok && compiled.pattern.test(sampleId);
}

export async function applyQualityOnIngest(
  tx: Tx,
  row: Reading,
  payload: { specimenRole?: 'patient' | 'control'; controlLevel?: string },
  /** The administrator who imported it from a capture file (no bridge sent it). */
  importedBy?: string,
): Promise<Reading> {
  const { timeZone, settings } = await clinicClock(tx, row.clinicId);
  const control = payload.specimenRole === 'control' || isQcSampleId(row.sampleId, settings.qcSampleIdPattern);
  const lot = await loadedLot(tx, row.clinicId, row.instrumentId, row.analyte);
  const day = localDay(row.measuredAt ?? row.receivedAt, timeZone);
  const marks: QualityMark[] = [];
  if (lot && isExpiredOn(lot.expiresOn, day)) marks.push('kit-expired');
  const level = control ? (payload.controlLevel ?? null) : null;
  const material = control ? await matchControlMaterial(tx, row.clinicId, { ...row, level }) : null;
  if (!control && (await qcStatusFor(tx, row.clinicId, row.analyte, row.instrumentId)) === 'rejected') marks.push('qc-failed');
  if (!control && !lot && marks.length === 0) return row;
  const [updated] = await tx
    .update(readings)
    .set({
      kitLotId: lot?.id ?? null,
      qualityMarks: marks,
      ...(control ? { status: 'control' as const, controlMaterialId: material?.id ?? null } : {}),
    })
    .where(eq(readings.id, row.id))
    .returning();
  if (control) {
    await recordAudit(tx, {
      clinicId: row.clinicId,
      ...(importedBy ? { actorUserId: importedBy } : { actorBridgeId: row.bridgeId }),
      action: 'reading.marked-control',
      entityType: 'reading',
      entityId: row.id,
      details: {
        how: payload.specimenRole === 'control' ? 'analyzer' : 'sample-id pattern',
        controlMaterialId: material?.id ?? null,
        ...(level ? { level } : {}),
      },
    });
  }
  if (control || marks.length) await publish(tx, { type: 'quality.updated', clinicId: row.clinicId, id: row.id });
  return updated;
}
