import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DEFAULT_ANALYTES, DEFAULT_INTERVALS } from '@/lib/clinical/defaults';
import { evaluateResult, formatMeasured, pickInterval, type IntervalContext } from '@/lib/clinical/evaluate';
import { revalidates } from '@/app/(clinic)/live';

// Canine CRP defaults: upper limit 10 mg/L (from memory; healthy dogs < 5 mg/L in Am J Vet
// Res 1987;48:919–921), critical 100 mg/L (clinic policy placeholder, no published source). Unit
// arithmetic is UCUM's (1 mg/dL = 10 mg/L, unitsofmeasure.org: prefix d = 10^-1).
const crp = { ...DEFAULT_ANALYTES[0], speciesNote: DEFAULT_ANALYTES[0].speciesNote };
const dogInterval: IntervalContext = { ...DEFAULT_INTERVALS[0], id: 'i-dog', instrumentId: null };
const readerInterval: IntervalContext = { ...dogInterval, id: 'i-reader', instrumentId: 'reader-1', high: 8, source: 'in-house, reader 1' };
const dog = { name: 'Biscuit', species: 'dog' };
const r = (value: number | null, extra: Partial<{ comparator: '<' | '>' | null; unit: string | null; instrumentId: string | null; valueDecimals: number | null }> = {}) => ({
  analyte: 'cCRP',
  value,
  comparator: null,
  unit: 'mg/L',
  instrumentId: null,
  ...extra,
});

describe('a result in context', () => {
  it('prefers an interval set for the instrument, then the species-wide one', () => {
    expect(pickInterval([dogInterval, readerInterval], 'cCRP', 'dog', 'reader-1')?.id).toBe('i-reader');
    expect(pickInterval([dogInterval, readerInterval], 'cCRP', 'dog', 'reader-2')?.id).toBe('i-dog');
    expect(pickInterval([dogInterval], 'cCRP', 'cat', null)).toBeNull();
  });

  it('flags in the display unit: 37.4 mg/L shown as 3.74 mg/dL is high against 1 mg/dL', () => {
    const e = evaluateResult(r(37.4), dog, { ...crp, displayUnit: 'mg/dL' }, [dogInterval]);
    expect(e.display).toMatchObject({ value: 3.74, comparator: null, unit: 'mg/dL' });
    expect(e.interval).toMatchObject({ high: 1, criticalHigh: 10, unit: 'mg/dL' });
    expect(e.flag).toMatchObject({ flag: 'high', certain: true });
    expect(e.band).toEqual({ label: 'Raised', certain: true });
    // Converted, the value takes the analyte's decimals (1 for CRP), not the printed ones.
    expect(formatMeasured(e.display, 2)).toBe('3.7 mg/dL');
  });

  // The precision a value was sent with is kept on screen: an analyzer printing "5.0" reports to a tenth,
  // "26" to a unit (reporting at the instrument's resolution: common practice, no source).
  it('shows a value with the decimals it was printed with, in the printed unit; the analyte setting otherwise', () => {
    const cat = { name: 'Miso', species: 'cat' };
    const alt = { ...crp, code: 'ALT', unit: 'U/L', displayUnit: 'U/L', decimals: 0 };
    expect(formatMeasured(evaluateResult({ ...r(5, { valueDecimals: 1 }), analyte: 'ALT', unit: 'U/L' }, cat, alt, []).display)).toBe('5.0 U/L');
    expect(formatMeasured(evaluateResult({ ...r(26, { valueDecimals: 0 }), analyte: 'ALT', unit: 'U/L' }, cat, { ...alt, decimals: 2 }, []).display)).toBe('26 U/L');
    // Unknown precision (typed in, older rows): the analyte's setting.
    expect(formatMeasured(evaluateResult({ ...r(26, { valueDecimals: null }), analyte: 'ALT', unit: 'U/L' }, cat, { ...alt, decimals: 2 }, []).display)).toBe('26.00 U/L');
    // A value shown in another unit than printed: the analyte's setting (5.25 mg/L as 0.5 mg/dL with 1 decimal).
    expect(formatMeasured(evaluateResult(r(5.25, { valueDecimals: 2 }), dog, { ...crp, displayUnit: 'mg/dL', decimals: 1 }, [dogInterval]).display)).toBe('0.5 mg/dL');
    // A limit keeps its form as sent.
    expect(formatMeasured(evaluateResult(r(5, { comparator: '<', valueDecimals: 1 }), dog, crp, [dogInterval]).display)).toBe('<5 mg/L');
  });

  it('a loosely printed unit (mg/l) is the same UCUM unit; an unknown unit is said, not flagged', () => {
    expect(evaluateResult(r(152, { unit: 'mg/l' }), dog, crp, [dogInterval]).flag).toMatchObject({ flag: 'critical-high' });
    const bad = evaluateResult(r(152, { unit: 'mg per litre' }), dog, crp, [dogInterval]);
    expect(bad.flag).toBeNull();
    expect(bad.problems[0]).toMatch(/^Unit: "mg per litre" is not a UCUM unit/);
  });

  it('keeps the comparator through conversion: <5 mg/L is <0.5 mg/dL', () => {
    const e = evaluateResult(r(5, { comparator: '<' }), dog, { ...crp, displayUnit: 'mg/dL' }, [dogInterval]);
    expect(e.display).toMatchObject({ value: 0.5, comparator: '<', unit: 'mg/dL' });
    expect(formatMeasured(e.display, 1)).toBe('<0.5 mg/dL');
  });
});

describe('live updates reach every open list and chart', () => {
  // ARCHITECTURE.md: events are {type, clinicId, id, at}; clients refetch what the event concerns.
  const keys = (type: string, patientId?: string) => revalidates({ type: type as never, clinicId: 'c', id: 'x', at: '', patientId });
  it('an assignment refreshes Intake, suggestions, review lists, alerts and that patient’s chart', () => {
    expect(keys('reading.assigned', 'p1')).toEqual(expect.arrayContaining(['/api/readings', '/api/reviews', '/api/alerts', '/api/patients/p1']));
  });
  it('a started or closed test refreshes the bench and the suggestions (under /api/readings)', () => {
    expect(keys('order.created')).toEqual(expect.arrayContaining(['/api/orders', '/api/readings']));
  });
  it('reviews and alerts refresh their lists', () => {
    expect(keys('review.created', 'p1')).toEqual(expect.arrayContaining(['/api/reviews', '/api/patients/p1']));
    expect(keys('alert.created')).toContain('/api/alerts');
  });
});

describe('the analyzer’s own range, flags and qualitative results', () => {
  // The analyzer's range arrives as text (HL7 OBX-7 "22-40", ASTM R.6 "lower^upper"; from memory); when the
  // clinic has no interval for this analyte, species and instrument, it flags and bands the result, labelled so.
  const alb = { analyte: 'ALB', value: 10, comparator: null, unit: 'g/L', instrumentId: null, instrumentRange: '22-40', flags: ['L'] };

  it('flags and bands from the analyzer’s range when the clinic has none, and says whose interval it is', () => {
    const e = evaluateResult(alb, dog, undefined, []);
    expect(e.interval).toMatchObject({ low: 22, high: 40, origin: 'analyzer', source: 'Interval from the analyzer (22-40)' });
    expect(e.flag).toMatchObject({ flag: 'low', certain: true });
    expect(e.band).toEqual({ label: 'Below interval', certain: true });
    expect(e.analyzerFlag).toMatchObject({ codes: ['L'], abnormal: true });
  });

  it('uses the clinic’s interval first, and says so when the analyzer flagged what the clinic has within', () => {
    const clinic: IntervalContext = { id: 'alb-dog', analyte: 'ALB', species: 'dog', instrumentId: null, unit: 'g/L', low: 5, high: 40, criticalLow: null, criticalHigh: null, bands: [], source: 'test interval' };
    const e = evaluateResult(alb, dog, undefined, [clinic]);
    expect(e.interval).toMatchObject({ origin: 'clinic', low: 5 });
    expect(e.flag).toMatchObject({ flag: 'normal' });
    expect(e.band).toEqual({ label: 'Within interval', certain: true });
    expect(e.problems.join(' ')).toMatch(/Analyzer flag: L \(low\), although the clinic’s interval has the value within/);
  });

  it('reads ">10", "<5" and "3.9 to 6.1" ranges, and keeps a flag without any range', () => {
    expect(evaluateResult({ ...alb, instrumentRange: '3.9 to 6.1', value: 7 }, dog, undefined, []).flag).toMatchObject({ flag: 'high' });
    expect(evaluateResult({ ...alb, instrumentRange: '<5', value: 7 }, dog, undefined, []).interval).toMatchObject({ low: null, high: 5 });
    const none = evaluateResult({ ...alb, instrumentRange: null }, dog, undefined, []);
    expect(none.flag).toBeNull();
    expect(none.analyzerFlag?.text).toBe('Analyzer flag: L (low)');
  });

  it('a coded result is interpreted by the analyzer’s flag, else by the analyte’s rule, never as a number', () => {
    const felv = { analyte: 'FELV', value: null, comparator: null, unit: null, instrumentId: null, valueCode: { system: 'L', code: '1', display: 'Positive' } };
    expect(evaluateResult({ ...felv, flags: ['A'] }, dog, undefined, []).qualitative).toMatchObject({ label: 'Positive', abnormal: true, basis: 'Analyzer flag: A (abnormal)' });
    const rule = { ...crp, code: 'FELV', abnormalCodes: ['1'] };
    expect(evaluateResult(felv, dog, rule, []).qualitative).toMatchObject({ abnormal: true, basis: 'Clinic rule for FELV: abnormal when 1' });
    expect(evaluateResult(felv, dog, undefined, []).qualitative).toMatchObject({ abnormal: null });
    expect(evaluateResult(felv, dog, undefined, []).flag).toBeNull();
  });

  it('an upper-case unit is read as UCUM’s case-insensitive form and the note says so', () => {
    const e = evaluateResult(r(12, { unit: 'MG/L' }), dog, crp, [dogInterval]);
    expect(e.flag).toMatchObject({ flag: 'high' });
    expect(e.unitNote).toBe('"MG/L" read as mg/L (UCUM\'s case-insensitive form).');
  });

  // evaluateResult keeps the interval it chose per intervals list (a chart evaluates hundreds of results
  // against one list): a result evaluated after others against the same list must read exactly as it does
  // against a fresh copy of that list, whatever came before it (species, instrument, display unit, value).
  it('reads the same against a shared intervals list as against a fresh one, in any order', () => {
    const cat = { name: 'Miso', species: 'cat' };
    const catInterval: IntervalContext = { ...dogInterval, id: 'i-cat', species: 'cat', high: 5, criticalHigh: null };
    const shared = [dogInterval, readerInterval, catInterval];
    const reading = fc.record({
      value: fc.oneof(fc.constant(null), fc.double({ min: 0, max: 400, noNaN: true })),
      comparator: fc.constantFrom(null, '<' as const, '>' as const),
      unit: fc.constantFrom('mg/L', 'mg/dL', 'mg/l', 'MG/L', 'g/L', 'mg per litre', null),
      instrumentId: fc.constantFrom(null, 'reader-1', 'reader-2'),
    });
    const step = fc.record({ reading, cat: fc.boolean(), displayUnit: fc.constantFrom('mg/L', 'mg/dL') });
    fc.assert(
      fc.property(fc.array(step, { minLength: 1, maxLength: 12 }), (steps) => {
        for (const { reading: x, cat: isCat, displayUnit } of steps) {
          const args = [{ ...x, analyte: 'cCRP' }, isCat ? cat : dog, { ...crp, displayUnit }] as const;
          expect(evaluateResult(...args, shared)).toEqual(evaluateResult(...args, [...shared]));
        }
      }),
      { numRuns: 300 },
    );
  });
});
