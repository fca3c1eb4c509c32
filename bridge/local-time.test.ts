import { describe, expect, it } from 'vitest';
import { isoWithOffset, localIsoDateTime } from './local-time';
import { withTimeZone } from './testing/streams';

// ISO 8601 extended format with the UTC offset of the process time zone (IANA rules via Node's ICU).

describe('localIsoDateTime', () => {
  it('formats a wall-clock time with the offset in force then', async () => {
    await withTimeZone('Europe/Berlin', () => {
      expect(localIsoDateTime({ year: 2026, month: 12, day: 1, hour: 14, minute: 3, second: 22 })).toEqual({ ok: true, iso: '2026-12-01T14:03:22+01:00' });
      expect(localIsoDateTime({ year: 2026, month: 7, day: 1, hour: 0, minute: 0, second: 0 })).toEqual({ ok: true, iso: '2026-07-01T00:00:00+02:00' });
    });
    await withTimeZone('UTC', () => {
      expect(localIsoDateTime({ year: 2026, month: 1, day: 31, hour: 23, minute: 59, second: 59 })).toEqual({ ok: true, iso: '2026-01-31T23:59:59+00:00' });
    });
    await withTimeZone('America/St_Johns', () => {
      expect(localIsoDateTime({ year: 2026, month: 1, day: 15, hour: 8, minute: 0, second: 0 })).toEqual({ ok: true, iso: '2026-01-15T08:00:00-03:30' });
    });
  });

  it('names the impossible part', () => {
    expect(localIsoDateTime({ year: 2026, month: 13, day: 1, hour: 0, minute: 0, second: 0 })).toEqual({ ok: false, problem: 'date' });
    expect(localIsoDateTime({ year: 2026, month: 4, day: 31, hour: 0, minute: 0, second: 0 })).toEqual({ ok: false, problem: 'date' });
    expect(localIsoDateTime({ year: 50, month: 1, day: 1, hour: 0, minute: 0, second: 0 })).toEqual({ ok: false, problem: 'date' });
    expect(localIsoDateTime({ year: 2026, month: 1, day: 1, hour: 24, minute: 0, second: 0 })).toEqual({ ok: false, problem: 'time' });
    expect(localIsoDateTime({ year: 2026, month: 1, day: 1, hour: 12, minute: 60, second: 0 })).toEqual({ ok: false, problem: 'time' });
  });

  it('moves a time in the spring-forward gap to the same instant the offset describes', async () => {
    // 29 March 2026, 02:30 does not exist in Berlin; Date reads it as 03:30 summer time.
    await withTimeZone('Europe/Berlin', () => {
      const result = localIsoDateTime({ year: 2026, month: 3, day: 29, hour: 2, minute: 30, second: 0 });
      expect(result).toEqual({ ok: true, iso: '2026-03-29T03:30:00+02:00' });
    });
  });
});

describe('isoWithOffset', () => {
  it('gives the same instant as the Date', async () => {
    await withTimeZone('Asia/Kolkata', () => {
      const moment = new Date('2026-12-01T08:33:22.000Z');
      expect(isoWithOffset(moment)).toBe('2026-12-01T14:03:22+05:30');
      expect(new Date(isoWithOffset(moment)).getTime()).toBe(moment.getTime());
    });
  });
});
