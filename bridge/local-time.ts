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
