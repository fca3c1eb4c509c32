// Flags, changes and delta checks for results that may carry a comparator ("<5", ">200").
// A value printed as "<5" is a range, not the number 5: every answer here says what the range allows
// and marks itself uncertain when the range straddles a limit. Pure: no database.

export type Comparator = '<' | '>' | null;

export interface Measured {
  value: number | null;
  comparator: Comparator;
}

export interface Limits {
  low: number | null;
  high: number | null;
  criticalLow: number | null;
  criticalHigh: number | null;
}

/** Ordered from lowest to highest; abbreviations follow HL7 v2 table 0078 (abnormal flags). */
export const FLAG_ORDER = ['critical-low', 'low', 'normal', 'high', 'critical-high'] as const;
export type Flag = (typeof FLAG_ORDER)[number];

export const FLAG_LABEL: Record<Flag, string> = {
  'critical-low': 'Critical low',
  low: 'Low',
  normal: 'Within interval',
  high: 'High',
  'critical-high': 'Critical high',
};
export const FLAG_CODE: Record<Flag, string> = { 'critical-low': 'LL', low: 'L', normal: 'N', high: 'H', 'critical-high': 'HH' };

export interface FlagResult {
  /** The flag when certain; when not, the most abnormal one the range allows. */
  flag: Flag;
  /** Every flag the reported range allows, lowest first. */
  possible: Flag[];
  certain: boolean;
  critical: 'no' | 'yes' | 'possible';
  text: string;
}

/**
 * The interval a reported value stands for. Concentrations are not negative, so "<5" is [0, 5).
 * `lowerBound` lets a caller say otherwise (null: no floor).
 */
export function valueRange(m: Measured, lowerBound: number | null = 0): { min: number | null; max: number | null; minOpen: boolean; maxOpen: boolean } | null {
  if (m.value === null) return null;
  if (m.comparator === '<') return { min: lowerBound, max: m.value, minOpen: false, maxOpen: true };
  if (m.comparator === '>') return { min: m.value, max: null, minOpen: true, maxOpen: false };
  return { min: m.value, max: m.value, minOpen: false, maxOpen: false };
}

/** Flag index for x, or for a value just below (side -1) or just above (side +1) x. */
function rank(x: number, side: -1 | 0 | 1, l: Limits): number {
  const below = (limit: number | null) => limit !== null && (x < limit || (x === limit && side === -1));
  const above = (limit: number | null) => limit !== null && (x > limit || (x === limit && side === 1));
  if (below(l.criticalLow)) return 0;
  if (above(l.criticalHigh)) return 4;
  if (below(l.low)) return 1;
  if (above(l.high)) return 3;
  return 2;
}

function extremeRank(l: Limits, direction: 'lowest' | 'highest'): number {
  if (direction === 'lowest') return l.criticalLow !== null ? 0 : l.low !== null ? 1 : 2;
  return l.criticalHigh !== null ? 4 : l.high !== null ? 3 : 2;
}

const describe = (m: Measured, unit: string) =>
  m.comparator === '<' ? `below ${m.value} ${unit}` : m.comparator === '>' ? `above ${m.value} ${unit}` : `${m.value} ${unit}`;

/** Flags a result against an interval, honestly for comparators. Null when there is no value. */
export function flagResult(m: Measured, limits: Limits, unit = ''): FlagResult | null {
  const range = valueRange(m);
  if (!range) return null;
  const lo = range.min === null ? extremeRank(limits, 'lowest') : rank(range.min, range.minOpen ? 1 : 0, limits);
  const hi = range.max === null ? extremeRank(limits, 'highest') : rank(range.max, range.maxOpen ? -1 : 0, limits);
  const possible = FLAG_ORDER.slice(lo, hi + 1) as Flag[];
  const certain = lo === hi;
  // Most abnormal: the end of the range furthest from "normal".
  const flag = FLAG_ORDER[Math.abs(hi - 2) >= Math.abs(lo - 2) ? hi : lo];
  const criticalFlags = possible.filter((f) => f.startsWith('critical'));
  const critical = criticalFlags.length === 0 ? 'no' : certain ? 'yes' : 'possible';
  let text: string;
  if (certain) {
    text = FLAG_LABEL[flag];
  } else {
    text = `Reported ${describe(m, unit).trim()}: ${possible.map((f) => FLAG_LABEL[f].toLowerCase()).join(' or ')} — the exact value is not known`;
  }
  return { flag, possible, certain, critical, text };
}

export interface Change {
  /** Smallest and largest possible change (current − previous); null where unbounded. */
  minDelta: number | null;
  maxDelta: number | null;
  minPercent: number | null;
  maxPercent: number | null;
  exact: boolean;
  text: string;
}

const signed = (n: number, digits: number) => `${n > 0 ? '+' : n < 0 ? '−' : '±'}${Math.abs(n).toFixed(digits)}`;

/** The change from the previous result, as a range when either carries a comparator. */
export function changeBetween(previous: Measured, current: Measured, digits = 1, unit = ''): Change | null {
  const p = valueRange(previous);
  const c = valueRange(current);
  if (!p || !c) return null;
  const minDelta = c.min === null || p.max === null ? null : c.min - p.max;
  const maxDelta = c.max === null || p.min === null ? null : c.max - p.min;
  // Percent of the previous value: (c / p − 1) · 100, extreme at the range corners; p = 0 makes it unbounded.
  const minPercent = c.min === null || p.max === null || p.max === 0 ? null : (c.min / p.max - 1) * 100;
  const maxPercent = c.max === null || p.min === null || p.min === 0 ? null : (c.max / p.min - 1) * 100;
  const exact = !previous.comparator && !current.comparator;
  const u = unit ? ` ${unit}` : '';
  let text: string;
  if (exact && minDelta !== null) {
    text = `${signed(minDelta, digits)}${u}${minPercent !== null ? ` (${signed(minPercent, 0)}%)` : ''}`;
  } else if (minDelta !== null && minDelta > 0) {
    text = `at least ${signed(minDelta, digits)}${u}${minPercent !== null ? ` (at least ${signed(minPercent, 0)}%)` : ''}`;
  } else if (maxDelta !== null && maxDelta < 0) {
    text = `at least ${signed(maxDelta, digits)}${u}${maxPercent !== null ? ` (at least ${signed(maxPercent, 0)}%)` : ''}`;
  } else {
    text = 'not known (a value is beyond the reportable range)';
  }
  return { minDelta, maxDelta, minPercent, maxPercent, exact, text };
}

export interface DeltaRule {
  /** Change in the analyte's unit that is too large to be taken on trust. */
  absolute: number | null;
  /** Change in percent of the previous result. */
  percent: number | null;
  /** Only results this close in time are compared. */
  windowHours: number | null;
}

export interface DeltaCheck {
  flagged: boolean;
  /** True when the comparators leave it open whether the limits were crossed. */
  possible: boolean;
  text: string;
}

/** |ln(ratio)| bounds for a ratio range [lo, hi] (null: unbounded); a ratio ≤ 0 has no logarithm: unbounded. */
function logRatioBounds(lo: number | null, hi: number | null): { smallest: number; largest: number } {
  if (lo === null || hi === null || lo <= 0) {
    const known = lo !== null && lo > 1 ? Math.log(lo) : hi !== null && hi > 0 && hi < 1 ? -Math.log(hi) : 0;
    return { smallest: known, largest: Infinity };
  }
  const a = Math.log(lo);
  const b = Math.log(hi);
  return { smallest: a <= 0 && b >= 0 ? 0 : Math.min(Math.abs(a), Math.abs(b)), largest: Math.max(Math.abs(a), Math.abs(b)) };
}

/**
 * The delta check: a result that moved more than the rule allows since the same patient's previous one.
 * Both limits that are set must be exceeded. The percent limit is taken as a ratio on a log scale, so a
 * fall counts as much as the matching rise: a limit of +270 % (×3.7) is also crossed by a fall to less
 * than 1/3.7 of the previous value (152 → 3 mg/L). A percent change cannot fall below −100 %, which is
 * why a plain percent never catches a fall.
 * A delta check cannot tell why a result moved: a real change in the patient (surgery, treatment, the
 * course of disease) and a sample from another patient both set it off (common practice, no source), so
 * it says "large change since the last result" and asks for a clinical explanation before an identity check.
 */
export function deltaCheck(
  previous: Measured & { at: Date },
  current: Measured & { at: Date },
  rule: DeltaRule,
): DeltaCheck {
  const none = { flagged: false, possible: false, text: '' };
  if (rule.absolute === null && rule.percent === null) return none;
  const hours = (current.at.getTime() - previous.at.getTime()) / 3_600_000;
  if (rule.windowHours !== null && Math.abs(hours) > rule.windowHours) return none;
  const change = changeBetween(previous, current);
  if (!change) return none;
  const p = valueRange(previous)!;
  const c = valueRange(current)!;
  // Smallest and largest |change| the ranges allow.
  const smallest = (min: number | null, max: number | null) =>
    min !== null && min > 0 ? min : max !== null && max < 0 ? -max : 0;
  const largest = (min: number | null, max: number | null) =>
    min === null || max === null ? Infinity : Math.max(Math.abs(min), Math.abs(max));
  const absoluteOver = (test: 'smallest' | 'largest') =>
    rule.absolute === null || (test === 'smallest' ? smallest(change.minDelta, change.maxDelta) : largest(change.minDelta, change.maxDelta)) > rule.absolute;
  const ratio = logRatioBounds(
    c.min === null || p.max === null ? null : p.max === 0 ? null : c.min / p.max,
    c.max === null || p.min === null || p.min === 0 ? null : c.max / p.min,
  );
  const ratioLimit = rule.percent === null ? null : Math.log(1 + rule.percent / 100);
  const ratioOver = (test: 'smallest' | 'largest') => ratioLimit === null || (test === 'smallest' ? ratio.smallest : ratio.largest) > ratioLimit;
  const certainly = absoluteOver('smallest') && ratioOver('smallest');
  const maybe = absoluteOver('largest') && ratioOver('largest');
  if (!maybe) return none;
  const window = rule.windowHours !== null ? ` within ${rule.windowHours} h` : '';
  const factor = rule.percent !== null ? 1 + rule.percent / 100 : null;
  const limits = [rule.absolute !== null ? `${rule.absolute}` : null, factor !== null ? `×${Number(factor.toPrecision(3))} up or ÷${Number(factor.toPrecision(3))} down` : null]
    .filter(Boolean)
    .join(' and ');
  const advice = 'If treatment or the course of disease does not explain it, check that the sample is this patient’s.';
  return certainly
    ? { flagged: true, possible: false, text: `Large change since the last result: ${change.text} (${hoursText(hours)} earlier), more than ${limits}${window}. ${advice}` }
    : { flagged: true, possible: true, text: `Possibly a large change since the last result: it may exceed ${limits}${window}; a value is beyond the reportable range. ${advice}` };
}

const hoursText = (h: number) => (Math.abs(h) < 48 ? `${Math.abs(h).toFixed(1)} h` : `${(Math.abs(h) / 24).toFixed(1)} days`);

export interface SeriesSummary {
  count: number;
  /** Values with a comparator: they count, but take no part in the numeric mean. */
  censored: number;
  /** Mean of the exact values only; null when none. */
  meanOfExact: number | null;
  lowest: Measured | null;
  highest: Measured | null;
}

/** Sorts measured values by what they can be: "<5" sorts below 5 and ">200" above 200. */
function sortKey(m: Measured): number {
  return (m.value ?? 0) + (m.comparator === '<' ? -1e-9 : m.comparator === '>' ? 1e-9 : 0);
}

export function summarise(series: Measured[]): SeriesSummary {
  const withValue = series.filter((m) => m.value !== null);
  const exact = withValue.filter((m) => !m.comparator);
  const sorted = [...withValue].sort((a, b) => sortKey(a) - sortKey(b));
  return {
    count: withValue.length,
    censored: withValue.length - exact.length,
    meanOfExact: exact.length ? exact.reduce((s, m) => s + (m.value as number), 0) / exact.length : null,
    lowest: sorted[0] ?? null,
    highest: sorted.at(-1) ?? null,
  };
}

/**
 * Values exactly at a limit: a reference interval includes both of its limits (CLSI EP28-A3c defines
 * it as the interval between and including the lower and upper reference limits; from memory, verify),
 * and every other boundary (a critical limit, a band edge) is taken the same way: a value exactly on it
 * belongs to the side nearer the interval. `flagResult` and `bandFor` both follow it, so 10.0 mg/L with
 * an upper limit of 10 is "Within interval" in both.
 */
export const LIMIT_CONVENTION =
  'A value exactly at a limit counts as the side nearer the reference interval: the interval includes both its limits (CLSI EP28-A3c, from memory, verify).';

/**
 * The interpretation band a result falls in; null when the range straddles bands or none fits.
 * `centre`: where the interval is (its middle, or its one limit); a value exactly on a band edge belongs
 * to the band on the centre's side (LIMIT_CONVENTION). Without a centre, an edge belongs to the upper band.
 */
export function bandFor(
  m: Measured,
  bands: readonly { label: string; from: number | null; to: number | null }[],
  centre: number | null = null,
): { label: string; certain: boolean } | null {
  const range = valueRange(m);
  if (!range) return null;
  const fits = (x: number, side: -1 | 0 | 1) => {
    // Exactly on an edge: which way it leans (towards the interval's centre), unless a comparator says.
    const lean = side !== 0 ? side : centre !== null && x >= centre ? -1 : centre !== null ? 1 : 1;
    return bands.find(
      (b) =>
        (b.from === null || x > b.from || (x === b.from && lean > 0)) && (b.to === null || x < b.to || (x === b.to && lean < 0)),
    );
  };
  const low = range.min === null ? bands.find((b) => b.from === null) : fits(range.min, range.minOpen ? 1 : 0);
  const high = range.max === null ? bands.find((b) => b.to === null) : fits(range.max, range.maxOpen ? -1 : 0);
  if (!low || !high) return null;
  return { label: low === high ? low.label : `${low.label} to ${high.label.toLowerCase()}`, certain: low === high };
}

/** Where an interval is, for LIMIT_CONVENTION: the middle of its limits, or its one limit. */
export function intervalCentre(l: Pick<Limits, 'low' | 'high'>): number | null {
  if (l.low !== null && l.high !== null) return (l.low + l.high) / 2;
  return l.high ?? l.low;
}

/** Bands from the limits alone, when the clinic set none: below, within, above. */
export function bandsFromLimits(l: Pick<Limits, 'low' | 'high'>): { label: string; from: number | null; to: number | null }[] {
  const bands: { label: string; from: number | null; to: number | null }[] = [];
  if (l.low !== null) bands.push({ label: 'Below interval', from: null, to: l.low });
  bands.push({ label: 'Within interval', from: l.low, to: l.high });
  if (l.high !== null) bands.push({ label: 'Above interval', from: l.high, to: null });
  return bands;
}
