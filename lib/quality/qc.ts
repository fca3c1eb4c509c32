import 'server-only';
import { and, asc, eq, inArray, isNull, sql } from 'drizzle-orm';
import type { Executor } from '@/db/client';
import { controlMaterials, qualityGoals, readings } from '@/db/schema';
import { convert } from '@/lib/clinical/units';
import { biasPercent, sigmaBand, sigmaMetric, summarize } from './statistics';
import { currentStatus, evaluateHistory, groupIntoRuns, type QcObservation, type RunEvaluation, type RunStatus } from './westgard';

// QC history from the readings Benchwire stored as controls, evaluated with the Westgard rules.
// Runs are evaluated per analyte and instrument: the levels of one analyte on one instrument are judged together.

export interface QcReadingRow {
  id: string;
  analyte: string;
  instrumentId: string | null;
  /** In the control material's unit (converted from the unit the reading arrived in). */
  value: number | null;
  at: Date;
  materialId: string;
  level: string;
  mean: number;
  sd: number;
  /** The value and unit as the instrument sent them, when they differ from the control's unit. */
  sent: { value: number; unit: string } | null;
}

/** Which QC readings: one test or several, one instrument (null: readings without one) or all. */
export interface QcFilter {
  analyte?: string;
  analytes?: readonly string[];
  instrumentId?: string | null;
}

/** A QC reading that cannot be compared with its control's target: its unit does not convert to the control's. */
export interface QcUnitProblem {
  id: string;
  analyte: string;
  instrumentId: string | null;
  materialId: string;
  at: Date;
  value: number;
  unit: string | null;
  controlUnit: string;
  message: string;
}

interface StoredQcRow extends Omit<QcReadingRow, 'sent'> {
  unit: string | null;
  controlUnit: string;
}

/**
 * Puts each QC value in its control's unit before any rule sees it: a target of 1.2 mg/dL and a reading of
 * 12 mg/L are the same value (UCUM, via lib/clinical/units). A reading whose unit does not convert (mass
 * against moles, no unit, a unit UCUM cannot read) is never compared as if it did: it is set apart, with why.
 */
export function inControlUnits(rows: StoredQcRow[]): { comparable: QcReadingRow[]; problems: QcUnitProblem[] } {
  const comparable: QcReadingRow[] = [];
  const problems: QcUnitProblem[] = [];
  for (const { unit, controlUnit, ...row } of rows) {
    if (row.value === null) continue;
    const problem = (message: string) =>
      problems.push({ id: row.id, analyte: row.analyte, instrumentId: row.instrumentId, materialId: row.materialId, at: row.at, value: row.value as number, unit, controlUnit, message });
    if (!unit || !unit.trim()) {
      problem(`The reading came without a unit, so it cannot be compared with the control’s target in ${controlUnit}.`);
      continue;
    }
    if (unit === controlUnit) {
      comparable.push({ ...row, sent: null });
      continue;
    }
    const converted = convert(row.value, unit, controlUnit);
    if (!converted.ok) {
      problem(`${unit} does not convert to the control’s ${controlUnit}: ${converted.message} Not compared with the target.`);
      continue;
    }
    comparable.push({ ...row, value: converted.value, sent: converted.value === row.value ? null : { value: row.value, unit } });
  }
  return { comparable, problems };
}

/** QC readings that name a material and have a number, oldest first, in their controls' units, with those that cannot be. */
export async function qcReadingsWithUnits(tx: Executor, clinicId: string, filter: QcFilter = {}) {
  const conditions = [eq(readings.clinicId, clinicId), eq(readings.status, 'control')];
  if (filter.analyte) conditions.push(eq(readings.analyte, filter.analyte));
  if (filter.analytes) conditions.push(inArray(readings.analyte, [...filter.analytes]));
  if (filter.instrumentId !== undefined) {
    conditions.push(filter.instrumentId === null ? isNull(readings.instrumentId) : eq(readings.instrumentId, filter.instrumentId));
  }
  const rows = await tx
    .select({
      id: readings.id,
      analyte: readings.analyte,
      instrumentId: readings.instrumentId,
      value: readings.value,
      unit: readings.unit,
      controlUnit: controlMaterials.unit,
      at: sql<Date>`coalesce(${readings.measuredAt}, ${readings.receivedAt})`.mapWith((v) => new Date(v)),
      materialId: controlMaterials.id,
      level: controlMaterials.level,
      mean: controlMaterials.targetMean,
      sd: controlMaterials.targetSd,
    })
    .from(readings)
    .innerJoin(controlMaterials, eq(controlMaterials.id, readings.controlMaterialId))
    .where(and(...conditions))
    .orderBy(asc(sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`), asc(readings.storedAt));
  return inControlUnits(rows);
}

/** QC readings that can be compared with their controls' targets (see qcReadingsWithUnits), oldest first. */
export async function qcReadings(tx: Executor, clinicId: string, filter: QcFilter = {}) {
  return (await qcReadingsWithUnits(tx, clinicId, filter)).comparable;
}

export interface QcGroup {
  key: string;
  analyte: string;
  instrumentId: string | null;
  observations: QcObservation[];
  evaluations: RunEvaluation[];
  status: RunStatus | 'none';
}

/** Groups QC readings by analyte and instrument, into runs, and evaluates each group's history. */
export function evaluateGroups(rows: QcReadingRow[]): QcGroup[] {
  const groups = new Map<string, QcReadingRow[]>();
  for (const row of rows) {
    const key = `${row.analyte}|${row.instrumentId ?? ''}`;
    const list = groups.get(key);
    if (list) list.push(row);
    else groups.set(key, [row]);
  }
  return [...groups.entries()].map(([key, list]) => {
    // A material is one level; two lots of "level 1" are two materials, so the material id is the level key.
    const runs = groupIntoRuns(list.map((r) => ({ ...r, level: r.materialId, at: r.at.getTime() })));
    const observations: QcObservation[] = runs.map((r) => ({
      id: r.id,
      runId: r.runId,
      level: r.materialId,
      value: r.value as number,
      mean: r.mean,
      sd: r.sd,
      at: r.at,
    }));
    const evaluations = evaluateHistory(observations);
    return { key, analyte: list[0].analyte, instrumentId: list[0].instrumentId, observations, evaluations, status: currentStatus(evaluations) };
  });
}

/** The QC state that applies to a new patient reading of this analyte from this instrument. */
export async function qcStatusFor(tx: Executor, clinicId: string, analyte: string, instrumentId: string | null): Promise<RunStatus | 'none'> {
  const rows = await qcReadings(tx, clinicId, { analyte, instrumentId });
  const [group] = evaluateGroups(rows);
  return group?.status ?? 'none';
}

export interface SigmaView {
  analyte: string;
  teaPercent: number | null;
  teaSource: string | null;
  perMaterial: {
    materialId: string;
    n: number;
    observedMean: number | null;
    observedSd: number | null;
    cvPercent: number | null;
    biasPercent: number | null;
    sigma: number | null;
    band: string | null;
    note: string | null;
  }[];
}

/** Sigma per control material: bias against the target, CV from the clinic's own accepted runs. */
export async function sigmaFor(tx: Executor, clinicId: string, groups: QcGroup[], materialIds: string[]): Promise<SigmaView[]> {
  const goals = await tx.select().from(qualityGoals).where(eq(qualityGoals.clinicId, clinicId));
  const materials = materialIds.length
    ? await tx.select().from(controlMaterials).where(and(eq(controlMaterials.clinicId, clinicId), inArray(controlMaterials.id, materialIds)))
    : [];
  const analytes = [...new Set(materials.map((m) => m.analyte))].sort();
  return analytes.map((analyte) => {
    const goal = goals.find((g) => g.analyte === analyte) ?? null;
    const perMaterial = materials
      .filter((m) => m.analyte === analyte)
      .map((m) => {
        const accepted = groups
          .filter((g) => g.analyte === analyte)
          .flatMap((g) => g.evaluations.filter((e) => e.status !== 'rejected').flatMap((e) => e.observations))
          .filter((o) => o.level === m.id)
          .map((o) => o.value);
        const empty = { materialId: m.id, n: accepted.length, observedMean: null, observedSd: null, cvPercent: null, biasPercent: null, sigma: null, band: null };
        if (accepted.length < 2) return { ...empty, note: 'needs at least two accepted runs' };
        const s = summarize(accepted);
        const bias = biasPercent(s.mean, m.targetMean);
        if (!goal) return { ...empty, observedMean: s.mean, observedSd: s.sd, cvPercent: s.cvPercent, biasPercent: bias, note: 'no TEa set for this test' };
        if (!(s.cvPercent > 0)) return { ...empty, observedMean: s.mean, observedSd: s.sd, cvPercent: s.cvPercent, biasPercent: bias, note: 'CV is 0: no sigma' };
        const sigma = sigmaMetric({ teaPercent: goal.teaPercent, biasPercent: bias, cvPercent: s.cvPercent });
        return { materialId: m.id, n: s.n, observedMean: s.mean, observedSd: s.sd, cvPercent: s.cvPercent, biasPercent: bias, sigma, band: sigmaBand(sigma), note: null };
      });
    return { analyte, teaPercent: goal?.teaPercent ?? null, teaSource: goal?.source ?? null, perMaterial };
  });
}
