// Wall-clock times printed by an analyzer are the lab PC's local time (the process time zone, TZ honoured).

export interface WallClock {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

export type LocalIsoResult = { ok: true; iso: string } | { ok: false; problem: 'date' | 'time' };

/** ISO 8601 with the local UTC offset in force at that moment, or which part is impossible. */
export function localIsoDateTime(clock: WallClock): LocalIsoResult {
  const { year, month, day, hour, minute, second } = clock;
  // Years before 1900 are no analyzer clock, and Date would read 0–99 as 19xx.
  if (year < 1900 || month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) {
    return { ok: false, problem: 'date' };
  }
  if (hour > 23 || minute > 59 || second > 59) return { ok: false, problem: 'time' };
  // In a spring-forward gap Date moves the time forward; the instant and its offset stay consistent.
  return { ok: true, iso: isoWithOffset(new Date(year, month - 1, day, hour, minute, second)) };
}

/** A moment as local ISO 8601 with offset, e.g. 2026-12-01T14:03:22+01:00. */
export function isoWithOffset(moment: Date): string {
  const offset = -moment.getTimezoneOffset();
  const sign = offset < 0 ? '-' : '+';
  const abs = Math.abs(offset);
  return (
    `${pad(moment.getFullYear(), 4)}-${pad(moment.getMonth() + 1)}-${pad(moment.getDate())}` +
    `T${pad(moment.getHours())}:${pad(moment.getMinutes())}:${pad(moment.getSeconds())}` +
    `${sign}${pad(Math.floor(abs / 60))}:${pad(abs % 60)}`
  );
}

function daysInMonth(year: number, month: number): number {
  return new Date(Date.UTC(year, month, 0)).getUTCDate();
}

function pad(value: number, width = 2): string {
  return String(value).padStart(width, '0');
}

/** A moment as YYYYMMDDHHMMSS in local time, as ASTM E1394 and HL7 v2 write it. */
export function compactStamp(moment: Date): string {
  return `${pad(moment.getFullYear(), 4)}${pad(moment.getMonth() + 1)}${pad(moment.getDate())}${pad(moment.getHours())}${pad(moment.getMinutes())}${pad(moment.getSeconds())}`;
}

const COMPACT = /^(\d{4})(\d{2})(\d{2})(?:(\d{2})(\d{2})(\d{2})?)?(?:\.(\d{1,4}))?([+-]\d{4})?$/;

export type CompactTimestamp = { ok: true; iso: string | null } | { ok: false; problem: string };

/** The ±ZZZZ offset at the end of a compact timestamp (HL7 MSH-7), or null when it has none. */
export function compactOffset(text: string): string | null {
  return COMPACT.exec(text.trim())?.[8] ?? null;
}

/**
 * YYYYMMDD[HHMM[SS]][.S…][±ZZZZ] as ASTM E1394 and HL7 v2 (DTM/TS) write it. Fractional seconds are
 * kept. Without an offset it takes `defaultOffset` when given (HL7 v2 chapter 2, DTM: a time without an
 * offset is in the sending system's offset, which MSH-7 states; from memory), else the lab PC's local
 * time; a date without a time is no moment (null), not midnight.
 */
export function compactTimestamp(text: string, defaultOffset: string | null = null): CompactTimestamp {
  const match = COMPACT.exec(text.trim());
  if (!match) return { ok: false, problem: 'is not YYYYMMDDHHMMSS' };
  const [, year, month, day, hour, minute, second, fraction, ownOffset] = match;
  if (hour === undefined) {
    const check = localIsoDateTime({ year: +year, month: +month, day: +day, hour: 12, minute: 0, second: 0 });
    return check.ok ? { ok: true, iso: null } : { ok: false, problem: 'is not a real date' };
  }
  if (fraction !== undefined && second === undefined) return { ok: false, problem: 'has a fraction of a second but no seconds' };
  const clock = { year: +year, month: +month, day: +day, hour: +hour, minute: +minute, second: +(second ?? 0) };
  const local = localIsoDateTime(clock);
  if (!local.ok) return { ok: false, problem: local.problem === 'date' ? 'is not a real date' : 'is not a real time' };
  const frac = fraction !== undefined ? `.${fraction}` : '';
  const offset = ownOffset ?? defaultOffset ?? undefined;
  if (!offset) return { ok: true, iso: frac ? local.iso.replace(/([+-]\d{2}:\d{2}|Z)$/, `${frac}$1`) : local.iso };
  const hours = Number(offset.slice(1, 3));
  const minutes = Number(offset.slice(3, 5));
  if (hours > 14 || minutes > 59) return { ok: false, problem: 'has an impossible UTC offset' };
  return {
    ok: true,
    iso: `${year}-${month}-${day}T${hour}:${minute}:${second ?? '00'}${frac}${offset.slice(0, 3)}:${offset.slice(3, 5)}`,
  };
}
