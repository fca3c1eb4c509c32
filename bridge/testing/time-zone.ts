import { afterAll, beforeAll } from 'vitest';

/** Pins the process time zone for the test file (printed times are the lab PC's local time). */
export function pinTimeZone(tz: string): void {
  const before = process.env.TZ;
  beforeAll(() => {
    process.env.TZ = tz;
  });
  afterAll(() => {
    if (before === undefined) delete process.env.TZ;
    else process.env.TZ = before;
  });
}
