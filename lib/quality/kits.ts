// Reagent kit stock: every patient, QC or aborted run uses one test (an aborted run still spent its
// cartridge or chip; common practice, no source).

export interface KitLotStockInput {
  testsPerKit: number;
  kits: number;
  expiresOn: string; // YYYY-MM-DD
  used: { patient: number; qc: number; aborted: number };
  /** Warn when this many tests or fewer are left. */
  lowAt: number;
  /** Warn this many days before expiry. */
  warnDaysBeforeExpiry: number;
}

export interface KitLotStock {
  total: number;
  used: number;
  remaining: number;
  daysToExpiry: number;
  expired: boolean;
  low: boolean;
  nearExpiry: boolean;
  warnings: string[];
}

const DAY = 24 * 60 * 60 * 1000;

/** Whole days from `today` to `expiresOn` (both calendar dates); a lot is usable through its expiry date. */
export function daysBetween(today: string, expiresOn: string): number {
  return Math.round((Date.parse(`${expiresOn}T00:00:00Z`) - Date.parse(`${today}T00:00:00Z`)) / DAY);
}

/** A lot is expired the day after its expiry date (labels give the last day of use; common practice, no source). */
export function isExpiredOn(expiresOn: string, day: string): boolean {
  return daysBetween(day, expiresOn) < 0;
}

export function kitLotStock(input: KitLotStockInput, today: string): KitLotStock {
  const total = input.testsPerKit * input.kits;
  const used = input.used.patient + input.used.qc + input.used.aborted;
  const remaining = Math.max(0, total - used);
  const daysToExpiry = daysBetween(today, input.expiresOn);
  const expired = daysToExpiry < 0;
  const low = remaining <= input.lowAt;
  const nearExpiry = !expired && daysToExpiry <= input.warnDaysBeforeExpiry;
  const warnings: string[] = [];
  if (expired) warnings.push(`expired on ${input.expiresOn}`);
  else if (nearExpiry) warnings.push(`expires in ${daysToExpiry} day${daysToExpiry === 1 ? '' : 's'} (${input.expiresOn})`);
  if (remaining === 0) warnings.push('no tests left');
  else if (low) warnings.push(`only ${remaining} test${remaining === 1 ? '' : 's'} left`);
  if (used > total) warnings.push(`${used - total} more runs recorded than the lot holds: check the kit count`);
  return { total, used, remaining, daysToExpiry, expired, low, nearExpiry, warnings };
}

/** Room temperature against an instrument's allowed range, for one day's log entry (or none). */
export function temperatureMark(
  entry: { temperatureC: number } | null,
  range: { minC: number | null; maxC: number | null } | null,
): string | null {
  if (!range || (range.minC === null && range.maxC === null)) return null;
  if (!entry) return 'no room temperature logged that day';
  if (range.minC !== null && entry.temperatureC < range.minC) return `room ${entry.temperatureC} °C, below the instrument's ${range.minC} °C`;
  if (range.maxC !== null && entry.temperatureC > range.maxC) return `room ${entry.temperatureC} °C, above the instrument's ${range.maxC} °C`;
  return null;
}

/** The calendar day (YYYY-MM-DD) an instant falls on in a time zone. */
// One formatter per time zone: making one costs far more than formatting with it (ingest asks per reading).
const dayFormats = new Map<string, Intl.DateTimeFormat>();

export function localDay(at: Date, timeZone: string): string {
  let format = dayFormats.get(timeZone);
  if (!format) {
    format = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' });
    dayFormats.set(timeZone, format);
  }
  return format.format(at);
}
