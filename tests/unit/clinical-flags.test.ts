import { describe, expect, it } from 'vitest';
import { DEFAULT_ANALYTES, DEFAULT_INTERVALS } from '@/lib/clinical/defaults';
import { bandFor, bandsFromLimits, changeBetween, intervalCentre, deltaCheck, FLAG_CODE, flagResult, summarise, valueRange, type Limits } from '@/lib/clinical/flags';

// Canine CRP limits used below are the app's defaults: upper limit 10 mg/L (from memory, a limit in
// common use; healthy dogs < 5 mg/L in Am J Vet Res 1987;48:919–921) and a critical limit
// of 100 mg/L (clinic policy placeholder, no published source).
const crp = DEFAULT_INTERVALS.find((i) => i.analyte === 'cCRP' && i.species === 'dog')!;
const exact = (value: number) => ({ value, comparator: null });
const below = (value: number) => ({ value, comparator: '<' as const });
const above = (value: number) => ({ value, comparator: '>' as const });

describe('flags against an interval', () => {
  it('uses the HL7 v2 table 0078 abnormal-flag codes', () => {
    // HL7 v2.5 table 0078: L below low normal, H above high normal, LL/HH below/above panic limits, N normal.
    expect(FLAG_CODE).toEqual({ 'critical-low': 'LL', low: 'L', normal: 'N', high: 'H', 'critical-high': 'HH' });
  });

  it('flags exact canine CRP values: normal, high, critical high', () => {
    expect(flagResult(exact(5), crp)).toMatchObject({ flag: 'normal', certain: true, critical: 'no' });
    expect(flagResult(exact(37.4), crp)).toMatchObject({ flag: 'high', certain: true, critical: 'no' });
    expect(flagResult(exact(152), crp)).toMatchObject({ flag: 'critical-high', certain: true, critical: 'yes' });
  });

  it('treats the limits as inside the interval (common practice, no source): 10 is normal, 100 high', () => {
    expect(flagResult(exact(10), crp)?.flag).toBe('normal');
    expect(flagResult(exact(100), crp)?.flag).toBe('high');
  });

  it('<5 is certainly within an interval whose only limit is 10 above (concentrations are not negative)', () => {
    expect(valueRange(below(5))).toEqual({ min: 0, max: 5, minOpen: false, maxOpen: true });
    expect(flagResult(below(5), crp)).toMatchObject({ flag: 'normal', certain: true, possible: ['normal'] });
    // "<10" means under 10: still within.
    expect(flagResult(below(10), crp)).toMatchObject({ flag: 'normal', certain: true });
  });

  it('>200 is certainly above the critical limit 100; >50 may or may not be critical, and says so', () => {
    expect(flagResult(above(200), crp)).toMatchObject({ flag: 'critical-high', certain: true, critical: 'yes' });
    const r = flagResult(above(50), crp)!;
    expect(r).toMatchObject({ flag: 'critical-high', certain: false, critical: 'possible', possible: ['high', 'critical-high'] });
    expect(r.text).toMatch(/not known/);
    // ">100": just above the critical limit, so certainly critical.
    expect(flagResult(above(100), crp)).toMatchObject({ flag: 'critical-high', certain: true });
  });

  it('a "<" value straddling a low limit is uncertain (it may be low)', () => {
    const withLow: Limits = { low: 3, high: 10, criticalLow: null, criticalHigh: null };
    expect(flagResult(below(5), withLow)).toMatchObject({ certain: false, possible: ['low', 'normal'], flag: 'low' });
    expect(flagResult(below(3), withLow)).toMatchObject({ certain: true, flag: 'low' });
  });

  it('no value, no flag', () => {
    expect(flagResult({ value: null, comparator: null }, crp)).toBeNull();
  });

  it('places results in the interpretation bands, and a range across bands as such', () => {
    expect(bandFor(exact(5), crp.bands)).toEqual({ label: 'Within interval', certain: true });
    expect(bandFor(exact(37.4), crp.bands)).toEqual({ label: 'Raised', certain: true });
    expect(bandFor(above(200), crp.bands)).toEqual({ label: 'Markedly raised', certain: true });
    expect(bandFor(above(50), crp.bands)).toEqual({ label: 'Raised to markedly raised', certain: false });
  });

  // One convention for a value exactly at a limit, for flag and band alike: the interval includes its
  // limits (CLSI EP28-A3c: the reference interval lies between and includes the two limits; from memory,
  // verify), and a value on a critical limit or band edge belongs to the side nearer the interval.
  it('a value exactly at a limit gets the same answer from flag and band', () => {
    const centre = intervalCentre(crp);
    expect(flagResult(exact(10), crp)).toMatchObject({ flag: 'normal', certain: true });
    expect(bandFor(exact(10), crp.bands, centre)).toEqual({ label: 'Within interval', certain: true });
    expect(flagResult(exact(100), crp)).toMatchObject({ flag: 'high', certain: true });
    expect(bandFor(exact(100), crp.bands, centre)).toEqual({ label: 'Raised', certain: true });
    const glu: Limits = { low: 3.9, high: 7.5, criticalLow: null, criticalHigh: null };
    expect(flagResult(exact(3.9), glu)).toMatchObject({ flag: 'normal' });
    expect(bandFor(exact(3.9), bandsFromLimits(glu), intervalCentre(glu))).toEqual({ label: 'Within interval', certain: true });
    expect(bandFor(exact(3.8), bandsFromLimits(glu), intervalCentre(glu))).toEqual({ label: 'Below interval', certain: true });
    expect(bandFor(exact(7.5), bandsFromLimits(glu), intervalCentre(glu))).toEqual({ label: 'Within interval', certain: true });
  });
});

describe('change from the previous result', () => {
  it('exact values: absolute and percent (Biscuit day 3 → day 4: 61.0 → 24.8 mg/L)', () => {
    const c = changeBetween(exact(61), exact(24.8), 1, 'mg/L')!;
    expect(c.minDelta).toBeCloseTo(-36.2, 10);
    expect(c.maxDelta).toBeCloseTo(-36.2, 10);
    expect(c.minPercent).toBeCloseTo(((24.8 - 61) / 61) * 100, 10);
    expect(c.text).toBe('−36.2 mg/L (−59%)');
  });

  it('with a comparator it is a bound, not a number (24.8 → <5.0: fell by at least 19.8)', () => {
    const c = changeBetween(exact(24.8), below(5), 1, 'mg/L')!;
    expect(c.exact).toBe(false);
    expect(c.minDelta).toBeCloseTo(-24.8, 10);
    expect(c.maxDelta).toBeCloseTo(-19.8, 10);
    expect(c.text).toBe('at least −19.8 mg/L (at least −80%)');
  });

  it('from "<5" up to 96.4: a rise of at least 91.4, percent unbounded (previous may be near 0)', () => {
    const c = changeBetween(below(5), exact(96.4), 1, 'mg/L')!;
    expect(c.minDelta).toBeCloseTo(91.4, 10);
    expect(c.maxPercent).toBeNull();
    expect(c.text).toBe('at least +91.4 mg/L (at least +1828%)');
  });

  it('both beyond the range the same way: not known', () => {
    expect(changeBetween(above(200), above(200))!.text).toMatch(/not known/);
  });
});

describe('delta check (large change since the last result)', () => {
  // The default rule: 270% (one-sided critical difference for serial canine CRP, 269.9%, J Vet Intern
  // Med 2011, doi:10.1111/j.1939-1676.2011.0729.x) and 20 mg/L within 72 h (clinic choice, no source).
  const a = DEFAULT_ANALYTES.find((x) => x.code === 'cCRP')!;
  const rule = { absolute: a.deltaAbsolute, percent: a.deltaPercent, windowHours: a.deltaWindowHours };
  const h = (hours: number) => new Date(Date.UTC(2026, 11, 1) + hours * 3_600_000);

  it('flags 8.1 → 96.4 mg/L within 48 h (+88.3, +1090%)', () => {
    const d = deltaCheck({ ...exact(8.1), at: h(0) }, { ...exact(96.4), at: h(48) }, rule);
    expect(d).toMatchObject({ flagged: true, possible: false });
    expect(d.text).toMatch(/^Large change since the last result: \+88\.3/);
    // A delta check cannot tell a real change from a mix-up (common practice, no source): it asks for both.
    expect(d.text).toMatch(/If treatment or the course of disease does not explain it, check that the sample is this patient’s\./);
  });

  // Falls count as much as rises: with a log-normal reference change value the limits are symmetric on a
  // log scale, a rise by ×(1 + x) matching a fall by ÷(1 + x) (log-normal RCV, Clin Chem
  // 2006;52:1224–1231; from memory, verify). 152 → 3 mg/L is ÷50.7, beyond ÷3.7, and −149 mg/L beyond 20.
  it('flags a fall as it flags a rise: 152 → 3 mg/L within 24 h', () => {
    const d = deltaCheck({ ...exact(152), at: h(0) }, { ...exact(3), at: h(24) }, rule);
    expect(d).toMatchObject({ flagged: true, possible: false });
    expect(d.text).toMatch(/−149\.0/);
    // ÷3.6 is under ÷3.7: not flagged, as +260 % would not be.
    expect(deltaCheck({ ...exact(72), at: h(0) }, { ...exact(20), at: h(24) }, rule).flagged).toBe(false);
    expect(deltaCheck({ ...exact(20), at: h(0) }, { ...exact(72), at: h(24) }, rule).flagged).toBe(false);
  });

  it('does not flag 61.0 → 24.8 (−59%: under the percent limit) nor a big change outside the window', () => {
    expect(deltaCheck({ ...exact(61), at: h(0) }, { ...exact(24.8), at: h(24) }, rule).flagged).toBe(false);
    expect(deltaCheck({ ...exact(8.1), at: h(0) }, { ...exact(96.4), at: h(96) }, rule).flagged).toBe(false);
  });

  it('both limits must be exceeded: +15 mg/L from 2 is +750% but under 20 mg/L', () => {
    expect(deltaCheck({ ...exact(2), at: h(0) }, { ...exact(17), at: h(1) }, rule).flagged).toBe(false);
  });

  it('comparators: from "<5" to 96.4 certainly exceeds both; ">200" after ">200" is not flagged as certain', () => {
    expect(deltaCheck({ ...below(5), at: h(0) }, { ...exact(96.4), at: h(24) }, rule)).toMatchObject({ flagged: true, possible: false });
    const unknown = deltaCheck({ ...above(200), at: h(0) }, { ...above(200), at: h(1) }, rule);
    expect(unknown.possible || !unknown.flagged).toBe(true);
  });

  it('no limits set, no check', () => {
    expect(deltaCheck({ ...exact(1), at: h(0) }, { ...exact(500), at: h(1) }, { absolute: null, percent: null, windowHours: null }).flagged).toBe(false);
  });
});

describe('statistics over a series with comparators', () => {
  it('keeps censored values out of the mean and sorts "<5" below 5', () => {
    const s = summarise([exact(8.1), exact(96.4), exact(61), exact(24.8), below(5)]);
    expect(s).toMatchObject({ count: 5, censored: 1, lowest: below(5), highest: exact(96.4) });
    expect(s.meanOfExact).toBeCloseTo((8.1 + 96.4 + 61 + 24.8) / 4, 10);
    expect(summarise([below(5), exact(5)]).lowest).toEqual(below(5));
    expect(summarise([above(200), exact(200)]).highest).toEqual(above(200));
  });
});
