// One result in context: converted to the clinic's units through UCUM, flagged against the interval
// for the patient's species, placed in its interpretation band. Pure: the caller brings the settings.
import type { InterpretationBand } from '@/db/schema';
import { bandFor, bandsFromLimits, flagResult, intervalCentre, type Comparator, type Flag, type FlagResult, type Limits } from './flags';
import { speciesWarning } from './matching';
import { checkUnit, convert } from './units';

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
  /** Qualitative results: codes that mean abnormal when the analyzer does not flag them. */
  abnormalCodes?: string[];
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

export const ANALYZER_INTERVAL_SOURCE = 'Interval from the analyzer';

/**
 * A reference range as analyzers send it: HL7 OBX-7 "3.5-5.0", ">10", "<5" (HL7 v2 chapter 7, from
 * memory); ASTM R.6 "lower^upper" (read as "lower to upper"). Decimal point only; null when not readable.
 */
export function parseAnalyzerRange(text: string | null | undefined): Pick<Limits, 'low' | 'high'> | null {
  if (!text) return null;
  const n = String.raw`[+-]?(?:\d+(?:\.\d+)?|\.\d+)`;
  const t = text.trim();
  const both = new RegExp(`^(${n})\\s*(?:-|–|to|\\^)\\s*(${n})$`, 'i').exec(t);
  if (both) {
    const low = Number(both[1]);
    const high = Number(both[2]);
    return low <= high ? { low, high } : null;
  }
  const one = new RegExp(`^([<>])=?\\s*(${n})$`).exec(t);
  if (one) return one[1] === '<' ? { low: null, high: Number(one[2]) } : { low: Number(one[2]), high: null };
  return null;
}

// HL7 v2 table 0078 abnormal flags (from memory): L/H below/above, LL/HH below/above the panic limit,
// < / > below/above the measuring range, A/AA abnormal/very abnormal, N normal. ASTM R.7 uses the same letters.
const ANALYZER_FLAG_MEANING: Record<string, { text: string; flag: Flag | 'abnormal' }> = {
  L: { text: 'low', flag: 'low' },
  H: { text: 'high', flag: 'high' },
  LL: { text: 'critically low', flag: 'critical-low' },
  HH: { text: 'critically high', flag: 'critical-high' },
  '<': { text: 'below the measuring range', flag: 'low' },
  '>': { text: 'above the measuring range', flag: 'high' },
  A: { text: 'abnormal', flag: 'abnormal' },
  AA: { text: 'very abnormal', flag: 'abnormal' },
  POS: { text: 'positive', flag: 'abnormal' },
  N: { text: 'normal', flag: 'normal' },
};

export interface AnalyzerFlag {
  codes: string[];
  text: string;
  abnormal: boolean;
}

/** The analyzer's own abnormal flags among a reading's flags (status words such as "preliminary" left out). */
export function analyzerFlagOf(flags: readonly string[] | undefined): AnalyzerFlag | null {
  const known = (flags ?? []).filter((f) => ANALYZER_FLAG_MEANING[f.toUpperCase()]);
  if (known.length === 0) return null;
  const meanings = known.map((f) => ANALYZER_FLAG_MEANING[f.toUpperCase()]);
  return {
    codes: known,
    text: `Analyzer flag: ${known.map((f, i) => `${f} (${meanings[i].text})`).join(', ')}`,
    abnormal: meanings.some((m) => m.flag !== 'normal'),
  };
}

export interface Qualitative {
  /** What was sent: the display text, else the code; or the text result. */
  label: string;
  code: { system: string | null; code: string; display: string | null } | null;
  text: string | null;
  /** null: nothing says whether it is abnormal. */
  abnormal: boolean | null;
  /** What the interpretation rests on. */
  basis: string;
}

export interface Evaluation {
  /**
   * The result in the clinic's display unit, comparator kept; `decimals` to show it with: the precision it
   * was sent with while shown in the printed unit, else the analyte's setting (null: neither is known).
   */
  display: { value: number | null; comparator: Comparator; unit: string | null; decimals?: number | null };
  /** The interval in the display unit, when one applies and the units convert; `origin` says whose it is. */
  interval: (Limits & { unit: string; source: string; id: string; origin: 'clinic' | 'analyzer' }) | null;
  flag: FlagResult | null;
  band: { label: string; certain: boolean } | null;
  /** The analyzer's own flags, shown whatever our interval says. */
  analyzerFlag: AnalyzerFlag | null;
  /** A coded or text result, with its interpretation. */
  qualitative: Qualitative | null;
  /** How the printed unit was read, when not as printed (MG/L read as mg/L); the printed unit stays on the reading. */
  unitNote: string | null;
  /** Why the result could not be flagged or converted, in plain words. */
  problems: string[];
  speciesWarning: string | null;
}

export interface EvaluatedReading {
  analyte: string;
  value: number | null;
  comparator: Comparator;
  unit: string | null;
  /** Set when `unit` is the clinic's mapping of a unit UCUM could not read: the text as printed. */
  printedUnit?: string | null;
  instrumentId: string | null;
  /** The range the analyzer sent (ASTM R.6, HL7 OBX-7). */
  instrumentRange?: string | null;
  flags?: string[];
  valueCode?: { system: string | null; code: string; display: string | null } | null;
  valueText?: string | null;
  /** Digits after the decimal mark as the instrument printed the value; null when unknown. */
  valueDecimals?: number | null;
}

/** A coded or text result's flag code where one is needed (reports, exports): A abnormal, N normal, null unknown. */
export function qualitativeFlag(q: Qualitative | null | undefined): 'A' | 'N' | null {
  return q?.abnormal == null ? null : q.abnormal ? 'A' : 'N';
}

function qualitativeOf(reading: EvaluatedReading, analyte: AnalyteContext | undefined, analyzerFlag: AnalyzerFlag | null): Qualitative | null {
  const code = reading.valueCode ?? null;
  const text = reading.valueText ?? null;
  if (!code && text === null) return null;
  const label = code ? code.display || code.code : (text as string);
  if (analyzerFlag) return { label, code, text, abnormal: analyzerFlag.abnormal, basis: analyzerFlag.text };
  const rule = (analyte?.abnormalCodes ?? []).map((c) => c.toUpperCase());
  if (code && rule.length) {
    const abnormal = rule.includes(code.code.toUpperCase()) || (!!code.display && rule.includes(code.display.toUpperCase()));
    return { label, code, text, abnormal, basis: `Clinic rule for ${reading.analyte}: abnormal when ${rule.join(', ')}` };
  }
  return { label, code, text, abnormal: null, basis: 'Not interpreted: the analyzer sent no flag and the clinic has no rule for this test' };
}

type ClinicInterval = {
  chosen: IntervalContext;
  /** In the result's display unit; null when the units do not convert. */
  interval: Evaluation['interval'];
  /** Bands are kept in the interval's unit: the result is compared there. */
  bandSource: { bands: readonly { label: string; from: number | null; to: number | null }[]; unit: string; limits: Pick<Limits, 'low' | 'high'> };
};
// A chart evaluates hundreds of results against the same few intervals: the interval's choice and its
// limits in the display unit are worked out once per intervals list (one request's), not per result.
const clinicIntervalsSeen = new WeakMap<readonly IntervalContext[], Map<string, ClinicInterval | null>>();

function clinicInterval(intervals: readonly IntervalContext[], analyte: string, species: string, instrumentId: string | null, displayUnit: string | null): ClinicInterval | null {
  let seen = clinicIntervalsSeen.get(intervals);
  if (!seen) clinicIntervalsSeen.set(intervals, (seen = new Map()));
  const key = `${analyte}\u0000${species}\u0000${instrumentId}\u0000${displayUnit}`;
  const known = seen.get(key);
  if (known !== undefined) return known;
  const chosen = pickInterval(intervals, analyte, species, instrumentId);
  let answer: ClinicInterval | null = null;
  if (chosen) {
    const limits = displayUnit ? convertLimits(chosen, chosen.unit, displayUnit) : null;
    answer = {
      chosen,
      interval: limits && displayUnit ? { ...limits, unit: displayUnit, source: chosen.source, id: chosen.id, origin: 'clinic' } : null,
      bandSource: { bands: chosen.bands.length ? chosen.bands : bandsFromLimits(chosen), unit: chosen.unit, limits: chosen },
    };
  }
  seen.set(key, answer);
  return answer;
}

export function evaluateResult(
  reading: EvaluatedReading,
  patient: { name: string; species: string },
  analyte: AnalyteContext | undefined,
  intervals: readonly IntervalContext[],
): Evaluation {
  const problems: string[] = [];
  const warning = analyte ? speciesWarning({ code: analyte.code, validatedSpecies: analyte.validatedSpecies }, patient) : null;
  const analyzerFlag = analyzerFlagOf(reading.flags);
  const qualitative = qualitativeOf(reading, analyte, analyzerFlag);
  if (qualitative) {
    return { display: { value: null, comparator: null, unit: reading.unit }, interval: null, flag: null, band: null, analyzerFlag, qualitative, unitNote: null, problems, speciesWarning: warning };
  }
  let display: Evaluation['display'] = { value: reading.value, comparator: reading.comparator, unit: reading.unit };
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
  // The analyzer's printed digits hold while the value is shown in the unit it was printed in; a converted
  // value (mg/dL shown as mg/L) takes the analyte's setting instead.
  const inPrintedUnit = display.unit === (unitCheck.ok ? unitCheck.ucum : reading.unit);
  const sent = inPrintedUnit ? (reading.valueDecimals ?? null) : null;
  display = { ...display, decimals: sent ?? analyte?.decimals ?? null };

  // The clinic's interval (analyte, species, instrument) when there is one, else the analyzer's own range.
  const clinic = clinicInterval(intervals, reading.analyte, patient.species, reading.instrumentId, display.unit);
  const fromAnalyzer = clinic ? null : parseAnalyzerRange(reading.instrumentRange);
  let interval: Evaluation['interval'] = null;
  let bandSource: { bands: readonly { label: string; from: number | null; to: number | null }[]; unit: string; limits: Pick<Limits, 'low' | 'high'> } | null = null;
  if (clinic) {
    if (display.unit) {
      if (clinic.interval) interval = clinic.interval;
      else problems.push(`The interval's unit ${clinic.chosen.unit} does not convert to ${display.unit}.`);
    }
    bandSource = clinic.bandSource;
  } else if (fromAnalyzer && unitCheck.ok) {
    const limits = convertLimits({ ...fromAnalyzer, criticalLow: null, criticalHigh: null }, unitCheck.ucum, display.unit ?? unitCheck.ucum);
    if (limits) {
      interval = { ...limits, unit: display.unit ?? unitCheck.ucum, source: `${ANALYZER_INTERVAL_SOURCE} (${reading.instrumentRange})`, id: 'analyzer', origin: 'analyzer' };
      bandSource = { bands: bandsFromLimits(fromAnalyzer), unit: unitCheck.ucum, limits: fromAnalyzer };
    }
  } else {
    problems.push(
      reading.instrumentRange
        ? `No reference interval for ${reading.analyte} in this species, and the analyzer's range "${reading.instrumentRange}" could not be read.`
        : `No reference interval for ${reading.analyte} in this species.`,
    );
  }
  const canFlag = interval !== null && display.unit === interval.unit && unitCheck.ok;
  const flag = canFlag ? flagResult(display, interval!, display.unit ?? '') : null;
  let band: Evaluation['band'] = null;
  if (canFlag && bandSource) {
    const inBandUnit = reading.value === null ? null : convert(reading.value, unitCheck.ok ? unitCheck.ucum : '', bandSource.unit);
    if (inBandUnit?.ok) band = bandFor({ value: inBandUnit.value, comparator: reading.comparator }, bandSource.bands, intervalCentre(bandSource.limits));
  }
  if (analyzerFlag?.abnormal && flag && flag.certain && flag.flag === 'normal') {
    problems.push(`${analyzerFlag.text}, although ${interval?.origin === 'clinic' ? 'the clinic’s interval' : 'its range'} has the value within: check the analyzer’s settings and the interval.`);
  }
  const mappedNote = reading.printedUnit && unitCheck.ok ? `Printed "${reading.printedUnit}", read as ${unitCheck.ucum} (the clinic's mapping for this instrument).` : null;
  return { display, interval, flag, band, analyzerFlag, qualitative: null, unitNote: mappedNote ?? (unitCheck.ok ? (unitCheck.note ?? null) : null), problems, speciesWarning: warning };
}

// Display formatting lives with the other client-safe helpers: this module reaches ucum-lhc (units.ts).
export { formatMeasured } from '@/lib/format';

/**
 * Before a reading is on a patient: whether it is critical for a species the clinic has an interval for,
 * so Intake can flag it at once. The test's validated species come first. Null when no interval makes it
 * critical (or none applies).
 */
export function criticalBeforeAssignment(
  reading: { analyte: string; value: number | null; comparator: Comparator; unit: string | null; instrumentId: string | null },
  analyte: AnalyteContext | undefined,
  intervals: readonly IntervalContext[],
): { species: string; text: string; certain: boolean } | null {
  const species = [...new Set(intervals.filter((i) => i.analyte === reading.analyte).map((i) => i.species))].sort(
    (a, b) => Number(analyte?.validatedSpecies.includes(b) ?? 0) - Number(analyte?.validatedSpecies.includes(a) ?? 0) || a.localeCompare(b),
  );
  const a: Record<string, string> = { dog: 'a dog', cat: 'a cat', rabbit: 'a rabbit', ferret: 'a ferret', bird: 'a bird', reptile: 'a reptile' };
  for (const s of species) {
    const { flag, interval } = evaluateResult(reading, { name: '', species: s }, analyte, intervals);
    if (!flag || flag.critical === 'no' || !interval) continue;
    const high = flag.possible.includes('critical-high');
    const limit = high ? interval.criticalHigh : interval.criticalLow;
    const where = `${high ? 'above' : 'below'} the critical limit ${limit} ${interval.unit}`;
    const text = `${flag.critical === 'yes' ? 'Critical' : 'Possibly critical'} for ${a[s] ?? s}: ${where}. Assign it first and tell the veterinarian.`;
    return { species: s, text, certain: flag.critical === 'yes' };
  }
  return null;
}
