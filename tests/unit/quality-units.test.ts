// QC values are compared with their control's target only in the control's unit. Factors come from UCUM's
// own definitions through @lhncbc/ucum-lhc (lib/clinical/units.ts), never typed in; the expectations below
// are UCUM's prefix table (UCUM, Table 1 "prefixes": d deci = 1e-1, m milli = 1e-3, u micro = 1e-6; from memory).
import { describe, expect, it } from 'vitest';
import { inControlUnits } from '@/lib/quality/qc';

const at = new Date('2026-12-01T09:00:00Z');
const row = (value: number | null, unit: string | null, controlUnit: string, id = 'r1') => ({
  id,
  analyte: 'CREA',
  instrumentId: 'i1',
  value,
  at,
  materialId: 'm1',
  level: '1',
  mean: 1.2,
  sd: 0.1,
  unit,
  controlUnit,
});

describe('QC readings in their control’s unit', () => {
  it('a reading in mg/L against a target in mg/dL is divided by 10 (1 dL = 0.1 L), and keeps what was sent', () => {
    const { comparable, problems } = inControlUnits([row(12, 'mg/L', 'mg/dL')]);
    expect(problems).toEqual([]);
    expect(comparable).toEqual([expect.objectContaining({ id: 'r1', value: 1.2, sent: { value: 12, unit: 'mg/L' } })]);
  });

  it('and the other way: 1.2 mg/dL against a target in mg/L is 12 mg/L', () => {
    expect(inControlUnits([row(1.2, 'mg/dL', 'mg/L')]).comparable[0]).toMatchObject({ value: 12, sent: { value: 1.2, unit: 'mg/dL' } });
  });

  it('umol/L to mmol/L is a factor of 1000 (u = 1e-6, m = 1e-3); the micro sign is read as u', () => {
    expect(inControlUnits([row(95, 'umol/L', 'mmol/L')]).comparable[0].value).toBe(0.095);
    expect(inControlUnits([row(95, 'µmol/L', 'mmol/L')]).comparable[0].value).toBe(0.095);
  });

  it('the same unit, or the same UCUM unit spelt differently (mg/l), is compared as sent', () => {
    const { comparable } = inControlUnits([row(1.3, 'mg/dL', 'mg/dL', 'a'), row(13, 'mg/l', 'mg/L', 'b')]);
    expect(comparable.map((r) => [r.value, r.sent])).toEqual([
      [1.3, null],
      [13, null],
    ]);
  });

  it('mass against amount of substance (mg/dL against mmol/L) does not convert without a molar mass: set apart with why, never compared', () => {
    const { comparable, problems } = inControlUnits([row(1.2, 'mg/dL', 'mmol/L')]);
    expect(comparable).toEqual([]);
    expect(problems).toEqual([expect.objectContaining({ id: 'r1', value: 1.2, unit: 'mg/dL', controlUnit: 'mmol/L', message: expect.stringMatching(/^mg\/dL does not convert to the control’s mmol\/L: .*Not compared with the target\.$/) })]);
  });

  it('a reading without a unit, or in a unit UCUM cannot read, is set apart too', () => {
    const { comparable, problems } = inControlUnits([row(12, null, 'mg/L', 'a'), row(12, 'mg per litre', 'mg/L', 'b')]);
    expect(comparable).toEqual([]);
    expect(problems.map((p) => p.id)).toEqual(['a', 'b']);
    expect(problems[0].message).toMatch(/came without a unit/);
    expect(problems[1].message).toMatch(/is not a UCUM unit/);
  });

  it('a reading without a number is neither compared nor reported (a coded or text QC result has no SD)', () => {
    expect(inControlUnits([row(null, 'mg/L', 'mg/L')])).toEqual({ comparable: [], problems: [] });
  });
});
