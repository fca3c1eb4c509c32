import { describe, expect, it } from 'vitest';
import { criticalBeforeAssignment, type AnalyteContext, type IntervalContext } from '@/lib/clinical/evaluate';
import { DEFAULT_ANALYTES, DEFAULT_INTERVALS } from '@/lib/clinical/defaults';

// A critical value is flagged on its Intake row before anyone assigns it. Limits: the built-in canine CRP
// interval (upper limit 10 mg/L, critical limit 100 mg/L: a clinic policy placeholder, see its source in
// lib/clinical/defaults.ts). Units through UCUM (mg/L is the same in both).
const a = DEFAULT_ANALYTES[0];
const analyte: AnalyteContext = { ...a, speciesNote: a.speciesNote ?? null, deltaAbsolute: a.deltaAbsolute ?? null, deltaPercent: a.deltaPercent ?? null, deltaWindowHours: a.deltaWindowHours ?? null, deltaSource: a.deltaSource ?? null };
const intervals: IntervalContext[] = DEFAULT_INTERVALS.map((i, n) => ({ ...i, id: `i${n}`, instrumentId: null }));
const reading = (value: number, comparator: '<' | '>' | null = null) => ({ analyte: 'cCRP', value, comparator, unit: 'mg/L', instrumentId: null });

describe('critical before assignment', () => {
  it('250 mg/L is critical for a dog (limit 100 mg/L), said in words', () => {
    expect(criticalBeforeAssignment(reading(250), analyte, intervals)).toEqual({
      species: 'dog',
      certain: true,
      text: 'Critical for a dog: above the critical limit 100 mg/L. Assign it first and tell the veterinarian.',
    });
  });
  it('42 mg/L is raised but not critical: no flag on the row', () => {
    expect(criticalBeforeAssignment(reading(42), analyte, intervals)).toBeNull();
  });
  it('">80" may be above 100: possibly critical', () => {
    expect(criticalBeforeAssignment(reading(80, '>'), analyte, intervals)).toMatchObject({ certain: false, text: expect.stringMatching(/^Possibly critical for a dog/) });
  });
  it('no interval for the test: nothing claimed', () => {
    expect(criticalBeforeAssignment(reading(250), analyte, [])).toBeNull();
  });
});
