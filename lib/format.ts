// Display helpers shared by server and client components. Keep this module free of heavy imports
// (units/ucum-lhc, the matcher): every page that formats a value ships it.

const SUPERSCRIPT: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/**
 * A UCUM unit code as people read it: "10*9/L" → "10⁹/L", "umol/L" → "µmol/L", "[IU]/L" → "IU/L".
 * UCUM (unitsofmeasure.org) §4 writes powers of ten as 10*n and the micro prefix as "u" in its
 * case-sensitive form; square brackets only delimit special unit atoms. The code itself is kept
 * beside the label wherever a result is shown in detail.
 */
export function unitLabel(ucum: string | null | undefined): string {
  if (!ucum) return '';
  return ucum
    .replace(/10[*^](-?\d+)/g, (_, exp: string) => `10${[...exp].map((c) => SUPERSCRIPT[c] ?? c).join('')}`)
    .replace(/(^|[/.\s(])u(?=(mol|g|L|l|m|eq|IU|\[IU\])\b)/g, '$1µ')
    .replace(/\[([^\]]+)\]/g, '$1');
}

/** The shortest plain text of a number (no float noise), as an instrument would print it. */
function plainNumber(value: number): string {
  return Number.isInteger(value) ? String(value) : String(Number(value.toFixed(6)));
}

/**
 * One result as people read it, the same on every screen: the analyte's decimals for a measured value
 * ("26 U/L" for an integer analyte, "5.20 10⁹/L" for two decimals); a value with a comparator is a
 * measuring limit and is shown as the instrument gave it ("<5", never "<5.0"). Without known decimals
 * the number is shown as sent.
 */
export function formatResult(
  r: { value: number | null; comparator: string | null; unit: string | null },
  decimals?: number | null,
): string {
  if (r.value === null) return '—';
  const number = r.comparator || decimals === undefined || decimals === null ? plainNumber(r.value) : r.value.toFixed(decimals);
  const unit = unitLabel(r.unit);
  return `${r.comparator ?? ''}${number}${unit ? ` ${unit}` : ''}`;
}

/**
 * Rounds for display with the decimals the result carries (the precision it was sent with, else the
 * analyte's setting: lib/clinical/evaluate.ts), else `decimals`; the comparator as sent: "<5 mg/L".
 */
export function formatMeasured(
  m: { value: number | null; comparator: '<' | '>' | null; unit: string | null; decimals?: number | null },
  decimals = 1,
): string {
  return formatResult(m, m.decimals ?? decimals);
}

/** The cautions every screen, report and e-mail that shows results carries. */
export const CLINICAL_CAUTION_TEXT =
  'Results support, and never replace, a veterinarian’s clinical judgement. Verify unexpected values (repeat the test, check the sample and the patient’s identity) before acting on them, and follow local regulations and licensed practice.';

/** A reading's value as sent (no analyte settings known), in the same form as formatResult; a code or text as sent. */
export function formatValue(r: {
  value: number | null;
  comparator: string | null;
  unit: string | null;
  decimals?: number | null;
  valueCode?: { code: string; display: string | null } | null;
  valueText?: string | null;
}): string {
  // A coded or text result is shown as sent, never as a number.
  if (r.valueCode) return r.valueCode.display ? `${r.valueCode.display} (${r.valueCode.code})` : r.valueCode.code;
  if (r.valueText != null) return r.valueText;
  return formatResult(r, r.decimals);
}

export function formatDateTime(value: string | Date | null | undefined): string {
  if (!value) return '—';
  const date = typeof value === 'string' ? new Date(value) : value;
  return date.toLocaleString(undefined, { dateStyle: 'medium', timeStyle: 'short' });
}

export function formatAge(dateOfBirth: string | null, now = new Date()): string {
  if (!dateOfBirth) return 'age unknown';
  const born = new Date(`${dateOfBirth}T00:00:00`);
  let months = (now.getFullYear() - born.getFullYear()) * 12 + (now.getMonth() - born.getMonth());
  if (now.getDate() < born.getDate()) months -= 1;
  if (months < 24) return `${Math.max(months, 0)} mo`;
  return `${Math.floor(months / 12)} y`;
}

export function timeAgo(value: string | Date, now = Date.now()): string {
  const seconds = Math.round((now - new Date(value).getTime()) / 1000);
  if (seconds < 45) return 'just now';
  if (seconds < 90) return '1 min ago';
  const minutes = Math.round(seconds / 60);
  if (minutes < 60) return `${minutes} min ago`;
  const hours = Math.round(minutes / 60);
  if (hours < 24) return `${hours} h ago`;
  return `${Math.round(hours / 24)} d ago`;
}

export const speciesLabel: Record<string, string> = {
  dog: 'Dog',
  cat: 'Cat',
  rabbit: 'Rabbit',
  ferret: 'Ferret',
  bird: 'Bird',
  reptile: 'Reptile',
  other: 'Other',
};

export const sexLabel: Record<string, string> = {
  male: 'male',
  male_neutered: 'male, neutered',
  female: 'female',
  female_spayed: 'female, spayed',
  unknown: 'sex unknown',
};

/** The analyzer's own flags among a reading's flags, for a row: "H", "L, A"; '' when it sent none. */
export function instrumentFlagsText(flags: readonly string[] | undefined): string {
  const own = (flags ?? []).filter((f) => !['preliminary', 'corrected', 'questionable', 'transcribed'].includes(f));
  return own.join(', ');
}

/**
 * Round axis ticks from 0 to at least max: steps of 1, 2 or 5 times a power of ten, about `count` of them
 * (the "nice numbers" rule in Heckbert P., Nice numbers for graph labels, Graphics Gems, 1990).
 */
export function niceTicks(max: number, count = 5): number[] {
  if (!(max > 0) || !Number.isFinite(max)) return [0, 1];
  const rough = max / Math.max(1, count - 1);
  const power = 10 ** Math.floor(Math.log10(rough));
  const fraction = rough / power;
  const step = (fraction < 1.5 ? 1 : fraction < 3 ? 2 : fraction < 7 ? 5 : 10) * power;
  const top = Math.ceil(max / step - 1e-9) * step;
  const ticks: number[] = [];
  for (let i = 0; i * step <= top + step / 1e6; i++) ticks.push(Number((i * step).toPrecision(12)));
  return ticks;
}
