import 'server-only';
import { and, asc, desc, eq, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { controlMaterials, instruments, qualityGoals, readings, referenceIntervals } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { evaluateGroups, qcReadingsWithUnits, sigmaFor } from './qc';
import { clinicClock, kitLotsWithStock } from './store';
import { zScore } from './westgard';

/** Everything the QC page shows: controls with their Levey-Jennings points and rule results, sigma, goals. */
export async function qcOverview(actor: Actor) {
  const database = await db();
  const [materials, instrumentRows, goals, qc, unmatched, intervals, clock, lots] = await Promise.all([
    database
      .select({ material: controlMaterials, instrumentName: instruments.name })
      .from(controlMaterials)
      .leftJoin(instruments, eq(instruments.id, controlMaterials.instrumentId))
      .where(eq(controlMaterials.clinicId, actor.clinicId))
      .orderBy(asc(controlMaterials.analyte), asc(controlMaterials.level)),
    database
      .select({ id: instruments.id, name: instruments.name, code: instruments.code, analytes: instruments.analytes })
      .from(instruments)
      .where(and(eq(instruments.clinicId, actor.clinicId), eq(instruments.active, true)))
      .orderBy(asc(instruments.name)),
    database.select().from(qualityGoals).where(eq(qualityGoals.clinicId, actor.clinicId)).orderBy(asc(qualityGoals.analyte)),
    qcReadingsWithUnits(database, actor.clinicId),
    database
      .select({ id: readings.id, analyte: readings.analyte, value: readings.value, unit: readings.unit, sampleId: readings.sampleId, receivedAt: readings.receivedAt, instrumentCode: readings.instrumentCode })
      .from(readings)
      .where(and(eq(readings.clinicId, actor.clinicId), eq(readings.status, 'control'), isNull(readings.controlMaterialId)))
      .orderBy(desc(readings.receivedAt))
      .limit(50),
    database
      .select()
      .from(referenceIntervals)
      .where(eq(referenceIntervals.clinicId, actor.clinicId))
      .orderBy(asc(referenceIntervals.analyte), asc(referenceIntervals.species)),
    clinicClock(database, actor.clinicId),
    kitLotsWithStock(database, actor.clinicId),
  ]);
  const rows = qc.comparable;
  const groups = evaluateGroups(rows);
  const sentOf = new Map(rows.map((r) => [r.id, r.sent]));
  const sigma = await sigmaFor(database, actor.clinicId, groups, materials.map((m) => m.material.id));
  const instrumentName = new Map(instrumentRows.map((i) => [i.id, i.name]));

  const controls = materials.map(({ material, instrumentName: loadedIn }) => {
    const points = groups.flatMap((g) =>
      g.evaluations.flatMap((e) =>
        e.observations
          .filter((o) => o.level === material.id)
          .map((o) => ({
            id: o.id,
            runId: o.runId,
            at: new Date(o.at).toISOString(),
            value: o.value,
            /** As the instrument sent it, when that was another unit (value is in the control's unit). */
            sent: sentOf.get(o.id) ?? null,
            z: zScore(o),
            status: e.status,
            rules: e.violations.filter((v) => v.observationIds.includes(o.id)).map((v) => v.rule),
          })),
      ),
    );
    return { ...material, instrumentName: loadedIn, points };
  });

  const status = groups.map((g) => ({
    analyte: g.analyte,
    instrumentId: g.instrumentId,
    instrumentName: g.instrumentId ? instrumentName.get(g.instrumentId) ?? null : null,
    status: g.status,
    lastRun: g.evaluations.at(-1) ?? null,
    rejections: g.evaluations
      .filter((e) => e.status !== 'accepted')
      .slice(-10)
      .reverse()
      .map((e) => ({ runId: e.runId, at: new Date(e.at).toISOString(), status: e.status, violations: e.violations })),
  }));

  const analytes = [...new Set([...instrumentRows.flatMap((i) => i.analytes), ...materials.map((m) => m.material.analyte)])].sort();
  return {
    analytes,
    instruments: instrumentRows,
    controls,
    status,
    sigma,
    goals,
    unmatched,
    /** QC readings left out of every rule because their unit does not convert to the control's. */
    unitProblems: qc.problems.slice(-50).reverse(),
    intervals,
    kitLots: lots,
    settings: clock.settings,
  };
}
export type QcOverview = Awaited<ReturnType<typeof qcOverview>>;
