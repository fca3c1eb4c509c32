// Display helpers shared by server and client components. Keep this module free of heavy imports
// (units/ucum-lhc, the matcher): every page that formats a value ships it.

/** Rounds for display with the analyte's decimals, keeping the comparator: "<5.0 mg/L". */
export function formatMeasured(m: { value: number | null; comparator: '<' | '>' | null; unit: string | null }, decimals = 1): string {
  if (m.value === null) return '—';
  return `${m.comparator ?? ''}${m.value.toFixed(decimals)}${m.unit ? ` ${m.unit}` : ''}`;
}

/** The cautions every screen, report and e-mail that shows results carries. */
export const CLINICAL_CAUTION_TEXT =
  'Results support, and never replace, a veterinarian’s clinical judgement. Verify unexpected values (repeat the test, check the sample and the patient’s identity) before acting on them, and follow local regulations and licensed practice.';

export function formatValue(r: {
  value: number | null;
  comparator: string | null;
  unit: string | null;
  valueCode?: { code: string; display: string | null } | null;
  valueText?: string | null;
}): string {
  // A coded or text result is shown as sent, never as a number.
  if (r.valueCode) return r.valueCode.display ? `${r.valueCode.display} (${r.valueCode.code})` : r.valueCode.code;
  if (r.valueText != null) return r.valueText;
  if (r.value === null) return '—';
  const number = Number.isInteger(r.value) ? String(r.value) : String(Number(r.value.toFixed(4)));
  return `${r.comparator ?? ''}${number}${r.unit ? ` ${r.unit}` : ''}`;
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
