// One result in context: converted to the clinic's units through UCUM, flagged against the interval
// for the patient's species, placed in its interpretation band. Pure: the caller brings the settings.
import type { InterpretationBand } from '@/db/schema';
import { bandFor, flagResult, type Comparator, type FlagResult, type Limits } from './flags';
import { speciesWarning } from './matching';
import { checkUnit, convert } from './units';
import { formatResult } from '@/lib/format';

export interface AnalyteContext {
  code: string;
  name: string;
  unit: string;
  displayUnit: string;
  decimals: number;
  validatedSpecies: string[];
  speciesNote: string | null;
  deltaAbsolute: number | null;
  deltaPercent: number | null;
  deltaWindowHours: number | null;
  deltaSource: string | null;
}

export interface IntervalContext extends Limits {
  id: string;
  analyte: string;
  species: string;
  instrumentId: string | null;
  unit: string;
  bands: InterpretationBand[];
  source: string;
}

/** The interval that applies: one set for this instrument first, then the species-wide one. */
export function pickInterval<T extends Pick<IntervalContext, 'analyte' | 'species' | 'instrumentId'>>(
  intervals: readonly T[],
  analyte: string,
  species: string,
  instrumentId: string | null,
): T | null {
  const forSpecies = intervals.filter((i) => i.analyte === analyte && i.species === species);
  return forSpecies.find((i) => instrumentId !== null && i.instrumentId === instrumentId) ?? forSpecies.find((i) => i.instrumentId === null) ?? null;
}

function convertLimits(limits: Limits, from: string, to: string): Limits | null {
  const out: Limits = { low: null, high: null, criticalLow: null, criticalHigh: null };
  for (const key of ['low', 'high', 'criticalLow', 'criticalHigh'] as const) {
    const v = limits[key];
    if (v === null) continue;
    const c = convert(v, from, to);
    if (!c.ok) return null;
    out[key] = c.value;
  }
  return out;
}

export interface Evaluation {
  /** The result in the clinic's display unit, comparator kept. */
  display: { value: number | null; comparator: Comparator; unit: string | null };
  /** The interval in the display unit, when one applies and the units convert. */
  interval: (Limits & { unit: string; source: string; id: string }) | null;
  flag: FlagResult | null;
  band: { label: string; certain: boolean } | null;
  /** Why the result could not be flagged or converted, in plain words. */
  problems: string[];
  speciesWarning: string | null;
}

export function evaluateResult(
  reading: { analyte: string; value: number | null; comparator: Comparator; unit: string | null; instrumentId: string | null },
  patient: { name: string; species: string },
  analyte: AnalyteContext | undefined,
  intervals: readonly IntervalContext[],
): Evaluation {
  const problems: string[] = [];
  const warning = analyte ? speciesWarning({ code: analyte.code, validatedSpecies: analyte.validatedSpecies }, patient) : null;
  let display = { value: reading.value, comparator: reading.comparator, unit: reading.unit };
  const unitCheck = checkUnit(reading.unit);
  if (!unitCheck.ok) problems.push(`Unit: ${unitCheck.message}`);
  const displayUnit = analyte?.displayUnit ?? (unitCheck.ok ? unitCheck.ucum : null);
  if (unitCheck.ok && displayUnit && reading.value !== null) {
    const c = convert(reading.value, unitCheck.ucum, displayUnit);
    if (c.ok) display = { value: c.value, comparator: reading.comparator, unit: displayUnit };
    else problems.push(`Cannot show the result in ${displayUnit}: ${c.message}`);
  } else if (unitCheck.ok) {
    display = { ...display, unit: displayUnit ?? unitCheck.ucum };
  }

  const chosen = pickInterval(intervals, reading.analyte, patient.species, reading.instrumentId);
  let interval: Evaluation['interval'] = null;
  if (!chosen) {
    problems.push(`No reference interval for ${reading.analyte} in this species.`);
  } else if (display.unit) {
    const limits = convertLimits(chosen, chosen.unit, display.unit);
    if (limits) interval = { ...limits, unit: display.unit, source: chosen.source, id: chosen.id };
    else problems.push(`The interval's unit ${chosen.unit} does not convert to ${display.unit}.`);
  }
  const canFlag = interval !== null && display.unit === interval.unit && unitCheck.ok;
  const flag = canFlag ? flagResult(display, interval!, display.unit ?? '') : null;
  let band: Evaluation['band'] = null;
  if (canFlag && chosen && chosen.bands.length) {
    // Bands are kept in the interval's unit: compare the result there.
    const inIntervalUnit = reading.value === null ? null : convert(reading.value, unitCheck.ok ? unitCheck.ucum : '', chosen.unit);
    if (inIntervalUnit?.ok) band = bandFor({ value: inIntervalUnit.value, comparator: reading.comparator }, chosen.bands);
  }
  return { display, interval, flag, band, problems, speciesWarning: warning };
}

/** Rounds for display with the analyte's decimals (lib/format formatResult: "<5 mg/L" keeps the limit as sent). */
export function formatMeasured(m: { value: number | null; comparator: Comparator; unit: string | null }, decimals = 1): string {
  return formatResult(m, decimals);
}
