import { describe, expect, it } from 'vitest';
import { backoffDelay } from './backoff';

// Exponential backoff with jitter (common practice, no source): doubling steps up to a cap,
// half of each step random so many bridges do not retry in step.

describe('backoffDelay', () => {
  const policy = { initialMs: 1_000, maxMs: 60_000 };

  it('doubles from the first step up to the cap', () => {
    expect([0, 1, 2, 3, 4, 5, 6, 7, 50].map((failures) => backoffDelay(failures, policy, () => 1))).toEqual([
      1_000, 2_000, 4_000, 8_000, 16_000, 32_000, 60_000, 60_000, 60_000,
    ]);
  });

  it('keeps the random part to half the step', () => {
    expect(backoffDelay(3, policy, () => 0)).toBe(4_000);
    expect(backoffDelay(3, policy, () => 0.5)).toBe(6_000);
    for (let i = 0; i < 200; i++) {
      const delay = backoffDelay(10, policy);
      expect(delay).toBeGreaterThanOrEqual(30_000);
      expect(delay).toBeLessThanOrEqual(60_000);
    }
  });
});
