import 'server-only';
// Kept free of Next imports: the demo seed runs before Next has set up its request environment.
import { eq } from 'drizzle-orm';
import type { Executor } from '@/db/client';
import { analyteSettings, instruments, referenceIntervals, runProtocols } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { DEFAULT_ANALYTES, DEFAULT_INTERVALS, DEFAULT_PROTOCOLS } from './defaults';

/**
 * Installs the built-in analyte, protocol and interval defaults a clinic does not have yet
 * (each keeps its source). Existing rows are left as the clinic set them.
 */
export async function installClinicalDefaults(tx: Executor, clinicId: string, actorUserId: string | null = null) {
  const instrumentRows = await tx.select({ id: instruments.id, code: instruments.code }).from(instruments).where(eq(instruments.clinicId, clinicId));
  const byCode = new Map(instrumentRows.map((i) => [i.code, i.id]));
  const added: string[] = [];
  for (const a of DEFAULT_ANALYTES) {
    const rows = await tx
      .insert(analyteSettings)
      .values({ ...a, clinicId, updatedBy: actorUserId })
      .onConflictDoNothing()
      .returning({ id: analyteSettings.id });
    if (rows.length) added.push(`analyte ${a.code}`);
  }
  for (const { instrumentCode, ...p } of DEFAULT_PROTOCOLS) {
    const instrumentId = instrumentCode ? byCode.get(instrumentCode) : null;
    if (instrumentId === undefined) continue;
    const rows = await tx
      .insert(runProtocols)
      .values({ ...p, instrumentId, clinicId, updatedBy: actorUserId })
      .onConflictDoNothing()
      .returning({ id: runProtocols.id });
    if (rows.length) added.push(`protocol ${p.analyte}`);
  }
  for (const i of DEFAULT_INTERVALS) {
    const rows = await tx
      .insert(referenceIntervals)
      .values({ ...i, clinicId, updatedBy: actorUserId })
      .onConflictDoNothing()
      .returning({ id: referenceIntervals.id });
    if (rows.length) added.push(`interval ${i.analyte} (${i.species})`);
  }
  if (added.length) {
    await recordAudit(tx, {
      clinicId,
      actorUserId,
      action: 'clinical.defaults-installed',
      entityType: 'clinic',
      entityId: clinicId,
      details: { added },
    });
  }
  return added;
}

