import { describe, expect, it } from 'vitest';
import { formatResult, niceTicks, unitLabel } from '@/lib/format';

describe('unitLabel: UCUM codes as people read them', () => {
  // UCUM §4 (unitsofmeasure.org): "10*" is ten to a power written with the exponent after it; the micro prefix
  // is "u" in the case-sensitive form (Table 1, prefixes: micro, c/s "u", print symbol µ).
  it.each([
    ['10*9/L', '10⁹/L'],
    ['10*12/L', '10¹²/L'],
    ['10*3/uL', '10³/µL'],
    ['umol/L', 'µmol/L'],
    ['ug/dL', 'µg/dL'],
    ['mmol/L', 'mmol/L'],
    ['U/L', 'U/L'],
    ['%', '%'],
    // Square brackets delimit a special unit atom in UCUM (§6, "[IU]"); the print form drops them.
    ['[IU]/L', 'IU/L'],
  ])('%s → %s', (code, label) => expect(unitLabel(code)).toBe(label));

  it('leaves a unit that only contains the letter u alone (U/L is an enzyme unit, not micro)', () => {
    expect(unitLabel('U/L')).toBe('U/L');
    expect(unitLabel(null)).toBe('');
  });
});

describe('formatResult: one form on every screen', () => {
  // An analyte reported in whole units is printed without a decimal (common practice, no source: enzyme
  // activities in U/L are reported as integers).
  it('uses the analyte’s decimals: 26 U/L, never 26.0 U/L', () => {
    expect(formatResult({ value: 26, comparator: null, unit: 'U/L' }, 0)).toBe('26 U/L');
    expect(formatResult({ value: 5.2, comparator: null, unit: '10*9/L' }, 2)).toBe('5.20 10⁹/L');
  });

  // A "<" or ">" value is the instrument's measuring limit (CLSI EP17 limit of quantitation; ASTM E1394 R.4 data
  // may carry it as text): shown as sent, the same in Intake and on the chart.
  it('shows a comparator value as sent: <5 mg/L, not <5.0', () => {
    expect(formatResult({ value: 5, comparator: '<', unit: 'mg/L' }, 1)).toBe('<5 mg/L');
    expect(formatResult({ value: 1000, comparator: '>', unit: 'U/L' }, 0)).toBe('>1000 U/L');
  });

  it('without known decimals shows the number as sent, without float noise', () => {
    expect(formatResult({ value: 0.1 + 0.2, comparator: null, unit: null })).toBe('0.3');
    expect(formatResult({ value: null, comparator: null, unit: 'mg/L' }, 1)).toBe('—');
  });
});

describe('niceTicks: chart axes on round numbers', () => {
  // Heckbert, "Nice numbers for graph labels" (Graphics Gems, 1990): steps of 1, 2, 5 × 10^k.
  it.each([
    [111, [0, 20, 40, 60, 80, 100, 120]],
    [193, [0, 50, 100, 150, 200]],
    [10, [0, 2, 4, 6, 8, 10]],
    [0.8, [0, 0.2, 0.4, 0.6, 0.8]],
  ])('max %s → %j', (max, ticks) => expect(niceTicks(max as number)).toEqual(ticks));
});
