import fc from 'fast-check';
import ucum from '@lhncbc/ucum-lhc';
import { describe, expect, it } from 'vitest';
import { checkUnit, convert, sameUnit, tidyUnit } from '@/lib/clinical/units';

// Every expected value here comes from ucum-lhc itself (the reference implementation of UCUM) or from
// the UCUM specification's definitions (unitsofmeasure.org: prefix d = 10^-1, u = 10^-6, m = 10^-3; l and L both the litre).
const ucumLhc = ucum.UcumLhcUtils.getInstance();
const lhc = (value: number, from: string, to: string) => ucumLhc.convertUnitTo(from, value, to).toVal!;

describe('UCUM units', () => {
  it('accepts the units instruments print for CRP and names them', () => {
    expect(checkUnit('mg/L')).toEqual({ ok: true, ucum: 'mg/L', name: ucumLhc.validateUnitString('mg/L').unit!.name });
    expect(checkUnit('mg/dL')).toMatchObject({ ok: true, ucum: 'mg/dL' });
  });

  it('refuses strings that are not UCUM, with a message', () => {
    const result = checkUnit('foo');
    expect(result.ok).toBe(false);
    expect(!result.ok && result.message).toMatch(/not a UCUM unit/);
    expect(checkUnit(null)).toEqual({ ok: false, message: 'No unit was printed.' });
    expect(checkUnit('   ').ok).toBe(false);
  });

  it('reads the micro sign as UCUM "u" (UCUM symbols are ASCII; ucum-lhc refuses µ as it is)', () => {
    expect(ucumLhc.validateUnitString('µg/mL').status).toBe('invalid');
    expect(tidyUnit(' µg/mL ')).toBe('ug/mL');
    expect(checkUnit('µg/mL')).toMatchObject({ ok: true, ucum: 'ug/mL' });
  });

  it('converts mg/L to mg/dL exactly as ucum-lhc does (1 mg/dL = 10 mg/L)', () => {
    expect(convert(37.4, 'mg/L', 'mg/dL')).toEqual({ ok: true, value: Number(lhc(37.4, 'mg/L', 'mg/dL').toPrecision(12)) });
    expect(convert(37.4, 'mg/L', 'mg/dL')).toEqual({ ok: true, value: 3.74 });
    expect(convert(10, 'mg/dL', 'mg/L')).toEqual({ ok: true, value: 100 });
  });

  it('treats mg/l and mg/L as one unit, and ug/mL as mg/L (UCUM definitions)', () => {
    expect(sameUnit('mg/l', 'mg/L')).toBe(true);
    expect(sameUnit('ug/mL', 'mg/L')).toBe(true);
    expect(sameUnit('mg/dL', 'mg/L')).toBe(false);
  });

  it('refuses mass to moles without a molar mass (ucum-lhc says so)', () => {
    const result = convert(37.4, 'mg/L', 'mmol/L');
    expect(result.ok).toBe(false);
    expect(!result.ok && result.message).toBe(ucumLhc.convertUnitTo('mg/L', 37.4, 'mmol/L').msg[0]);
  });

  it('agrees with ucum-lhc for any value, and converting back returns the value (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: 0.001, max: 1e5, noNaN: true }), fc.constantFrom(['mg/L', 'mg/dL'], ['mg/dL', 'g/L'], ['ug/mL', 'mg/dL']), (v, [a, b]) => {
        const there = convert(v, a, b);
        expect(there.ok).toBe(true);
        if (!there.ok) return;
        // Equal to ucum-lhc's own answer up to the 12 significant digits the app keeps.
        const reference = lhc(v, a, b);
        expect(Math.abs(there.value - reference) / reference).toBeLessThan(1e-11);
        const back = convert(there.value, b, a);
        expect(back.ok && Math.abs(back.value - v) / v).toBeLessThan(1e-9);
      }),
    );
  });
});

// UCUM §4 and its table columns "c/s" and "c/i" (from memory): every symbol has a case-insensitive form in
// capitals (mg → MG, L → L, umol → UMOL, [iU] → [IU]); in the case-sensitive form MG/L would be megagauss per litre.
describe('units in UCUM case-insensitive form', () => {
  it('reads capitals as the case-insensitive form and keeps a note of it', () => {
    expect(checkUnit('MG/L')).toMatchObject({ ok: true, ucum: 'mg/L', note: '"MG/L" read as mg/L (UCUM\'s case-insensitive form).' });
    expect(checkUnit('G/L')).toMatchObject({ ok: true, ucum: 'g/L' });
    expect(checkUnit('UMOL/L')).toMatchObject({ ok: true, ucum: 'umol/L' });
    expect(checkUnit('MG/DL')).toMatchObject({ ok: true, ucum: 'mg/dL' });
    expect(checkUnit('10*9/L')).toMatchObject({ ok: true, ucum: '10*9/L' });
    expect(checkUnit('U/L')).toMatchObject({ ok: true, ucum: 'U/L' });
    expect(checkUnit('[IU]/L')).toMatchObject({ ok: true, ucum: '[IU]/L' });
    // 10 mg/L = 1 mg/dL (1 dL = 0.1 L, SI brochure): the read unit converts like the lower-case one.
    expect(convert(10, checkUnit('MG/L').ok ? 'mg/L' : '', 'mg/dL')).toEqual({ ok: true, value: 1 });
  });

  it('refuses capitals that are no UCUM symbol, and leaves lower-case units case-sensitive', () => {
    expect(checkUnit('K/UL')).toMatchObject({ ok: false });
    expect(checkUnit('XYZ/L')).toMatchObject({ ok: false });
    expect(checkUnit('mg/L')).toEqual({ ok: true, ucum: 'mg/L', name: expect.any(String) });
  });
});
