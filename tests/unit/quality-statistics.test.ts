import { describe, expect, it } from 'vitest';
import { biasPercent, establishTarget, sigmaBand, sigmaMetric, summarize } from '@/lib/quality/statistics';
import { verifyReferenceInterval } from '@/lib/quality/reference-verification';
import { isExpiredOn, kitLotStock, temperatureMark } from '@/lib/quality/kits';

describe('sigma metric', () => {
  // σ = (TEa − |bias|) / CV (Westgard's sigma-metric; formula from memory, verify).
  // Worked by hand: TEa 10 %, bias −2 %, CV 2 % → (10 − 2) / 2 = 4.0.
  it('a worked example: TEa 10 %, bias −2 %, CV 2 % gives 4 σ', () => {
    expect(sigmaMetric({ teaPercent: 10, biasPercent: -2, cvPercent: 2 })).toBeCloseTo(4, 10);
    expect(sigmaBand(4)).toMatch(/good/);
  });
  it('from a control: observed mean 102 on target 100 is +2 % bias; SD 3 at mean 100 is CV 3 %; TEa 20 % → 6 σ', () => {
    const bias = biasPercent(102, 100);
    expect(bias).toBeCloseTo(2, 10);
    expect(sigmaMetric({ teaPercent: 20, biasPercent: bias, cvPercent: 3 })).toBeCloseTo(6, 10);
  });
  it('refuses a CV of zero', () => {
    expect(() => sigmaMetric({ teaPercent: 10, biasPercent: 0, cvPercent: 0 })).toThrow(/CV/);
  });
});

describe('summary statistics', () => {
  // Sample SD of 2, 4, 4, 4, 5, 5, 7, 9: mean 5, Σ(x − 5)² = 32, s = √(32/7) ≈ 2.138 (worked by hand).
  it('uses the n − 1 sample SD', () => {
    const s = summarize([2, 4, 4, 4, 5, 5, 7, 9]);
    expect(s.mean).toBe(5);
    expect(s.sd).toBeCloseTo(Math.sqrt(32 / 7), 12);
    expect(s.cvPercent).toBeCloseTo((Math.sqrt(32 / 7) / 5) * 100, 10);
  });
  // At least 20 runs before a target is set from the clinic's own data (CLSI C24; from memory, verify).
  it('establishes a target only from 20 or more runs', () => {
    const values = Array.from({ length: 19 }, (_, i) => 100 + (i % 5));
    expect(establishTarget(values).ok).toBe(false);
    const r = establishTarget([...values, 102]);
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.summary.n).toBe(20);
  });
});

describe('reference-interval verification (CLSI EP28-A3c, ASVCP guideline; from memory, verify)', () => {
  const inside = (n: number) => Array.from({ length: n }, (_, i) => 10 + (i % 10));
  it('20 samples with 2 outside: accepted (the boundary)', () => {
    const r = verifyReferenceInterval({ low: 10, high: 20, values: [...inside(18), 9.9, 20.1] });
    expect(r.decision).toBe('accepted');
    expect(r.first.outside).toBe(2);
    expect(r.first.values.filter((v) => v.outside).map((v) => v.outside)).toEqual(['low', 'high']);
  });
  it('20 samples with 3 outside: not accepted; a second set of 20 is needed', () => {
    const r = verifyReferenceInterval({ low: 10, high: 20, values: [...inside(17), 9.9, 20.1, 25] });
    expect(r.decision).toBe('test-second-set');
    expect(r.first.outside).toBe(3);
  });
  it('values on a limit are inside the interval', () => {
    const r = verifyReferenceInterval({ low: 10, high: 20, values: [...inside(17), 10, 20, 20] });
    expect(r.first.outside).toBe(0);
  });
  it('second set: 2 outside verifies, 3 outside rejects', () => {
    const first = [...inside(17), 1, 2, 3];
    expect(verifyReferenceInterval({ low: 10, high: 20, values: first, secondValues: [...inside(18), 1, 30] }).decision).toBe('accepted');
    expect(verifyReferenceInterval({ low: 10, high: 20, values: first, secondValues: [...inside(17), 1, 2, 30] }).decision).toBe('rejected');
  });
  it('fewer than 20 samples cannot be decided', () => {
    expect(verifyReferenceInterval({ low: 10, high: 20, values: inside(19) }).decision).toBe('too-few-samples');
  });
});

describe('kit stock', () => {
  const lot = { testsPerKit: 20, kits: 1, expiresOn: '2026-12-31', lowAt: 3, warnDaysBeforeExpiry: 30 };
  // 20 tests per chip/kit is the example of the trade in the issue (common practice, no source).
  it('patient, QC and aborted runs each use one test', () => {
    const s = kitLotStock({ ...lot, used: { patient: 10, qc: 4, aborted: 2 } }, '2026-11-01');
    expect(s.total).toBe(20);
    expect(s.used).toBe(16);
    expect(s.remaining).toBe(4);
    expect(s.low).toBe(false);
  });
  it('an aborted run takes the lot down to its low mark', () => {
    const s = kitLotStock({ ...lot, used: { patient: 10, qc: 4, aborted: 3 } }, '2026-11-01');
    expect(s.remaining).toBe(3);
    expect(s.low).toBe(true);
    expect(s.warnings).toContain('only 3 tests left');
  });
  it('warns near expiry and flags a lot past its expiry date', () => {
    const used = { patient: 0, qc: 0, aborted: 0 };
    expect(kitLotStock({ ...lot, used }, '2026-12-10').nearExpiry).toBe(true);
    expect(kitLotStock({ ...lot, used }, '2026-12-31').expired).toBe(false);
    expect(kitLotStock({ ...lot, used }, '2027-01-01').expired).toBe(true);
    expect(isExpiredOn('2026-12-31', '2027-01-01')).toBe(true);
  });
  it('never shows negative stock and says when more runs were recorded than the lot holds', () => {
    const s = kitLotStock({ ...lot, used: { patient: 21, qc: 0, aborted: 0 } }, '2026-11-01');
    expect(s.remaining).toBe(0);
    expect(s.warnings.join(' ')).toMatch(/1 more runs/);
  });
});

describe('room temperature mark', () => {
  // 18–25 °C for a benchtop reader is the trade example in the issue (common practice, no source).
  const range = { minC: 18, maxC: 25 };
  it('marks a missing or out-of-range day, and passes a day in range (limits inclusive)', () => {
    expect(temperatureMark(null, range)).toMatch(/no room temperature/);
    expect(temperatureMark({ temperatureC: 26 }, range)).toMatch(/above/);
    expect(temperatureMark({ temperatureC: 17.5 }, range)).toMatch(/below/);
    expect(temperatureMark({ temperatureC: 25 }, range)).toBeNull();
    expect(temperatureMark(null, null)).toBeNull();
  });
});
