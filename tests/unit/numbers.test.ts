import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { looksNumeric, printedDecimals, readNumber } from '@/lib/validation/numbers';

// Decimal marks and digit grouping: ISO 80000-1 §7.3.2 allows either a point or a comma as the decimal
// sign and groups digits in threes with a (thin) space, never with a point or comma (from memory, verify);
// senders in practice still group with commas or points ("12,500", "12.500"), common practice, no source.

describe('readNumber', () => {
  it('reads a decimal point, a comparator and exponent notation', () => {
    expect(readNumber('5.2', 'point')).toEqual({ ok: true, value: 5.2, comparator: null, decimals: 1 });
    expect(readNumber('<0.5', 'point')).toEqual({ ok: true, value: 0.5, comparator: '<', decimals: 1 });
    expect(readNumber('> 1500', 'point')).toEqual({ ok: true, value: 1500, comparator: '>', decimals: 0 });
    // E notation: mantissa E exponent, as ECMAScript's StrDecimalLiteral reads it (ECMA-262 §7.1.4.1.1).
    expect(readNumber('1.2E3', 'point')).toEqual({ ok: true, value: 1200, comparator: null, decimals: 0 });
    expect(readNumber('4.5e-2', 'point')).toEqual({ ok: true, value: 0.045, comparator: null, decimals: 3 });
    expect(readNumber('-3', 'point')).toEqual({ ok: true, value: -3, comparator: null, decimals: 0 });
  });

  it('never reads a comma from a decimal-point instrument, and never a point from a decimal-comma one', () => {
    const grouped = readNumber('12,500', 'point');
    expect(grouped.ok).toBe(false);
    expect(!grouped.ok && grouped.reason).toMatch(/has a comma, but this instrument is set to a decimal point/);
    expect(readNumber('12.500', 'comma').ok).toBe(false);
    expect(readNumber('12,5', 'comma')).toEqual({ ok: true, value: 12.5, comparator: null, decimals: 1 });
    expect(readNumber('1,2E3', 'comma')).toEqual({ ok: true, value: 1200, comparator: null, decimals: 0 });
  });

  it('refuses grouping in any form', () => {
    for (const text of ['1,234.5', '1.234,5', '12 500', "12'500", '12\u202f500', '1,2,3']) {
      expect(readNumber(text, 'either').ok, text).toBe(false);
      expect(readNumber(text, 'point').ok, text).toBe(false);
      expect(readNumber(text, 'comma').ok, text).toBe(false);
    }
  });

  it('lets a person type either mark for one value', () => {
    expect(readNumber('12,4', 'either')).toEqual({ ok: true, value: 12.4, comparator: null, decimals: 1 });
    expect(readNumber('12.4', 'either')).toEqual({ ok: true, value: 12.4, comparator: null, decimals: 1 });
    expect(readNumber('12,500', 'either').ok).toBe(false);
    expect(readNumber('1.250', 'either').ok).toBe(false);
  });

  it('tells numbers from words', () => {
    expect(looksNumeric('12,500')).toBe(true);
    expect(looksNumeric('1.2E3')).toBe(true);
    expect(looksNumeric('POS')).toBe(false);
    expect(looksNumeric('1+')).toBe(false);
  });

  // No numeric string with a comma or digit grouping ever becomes a smaller number silently. Property
  // over numbers ≥ 1000 written with en-US grouping (1,234.5) for a decimal-point reader and de-DE
  // grouping (1.234,5) for a decimal-comma reader (grouping as Intl.NumberFormat writes it, ECMA-402),
  // both for a person typing either mark, and over digit strings with commas for a decimal-point reader.
  it('never reads a grouped number as a smaller one (property)', () => {
    const en = new Intl.NumberFormat('en-US', { useGrouping: true, maximumFractionDigits: 3 });
    const de = new Intl.NumberFormat('de-DE', { useGrouping: true, maximumFractionDigits: 3 });
    fc.assert(
      fc.property(fc.integer({ min: 1000, max: 1e12 }), fc.integer({ min: 0, max: 999 }), (whole, frac) => {
        const n = whole + frac / 1000;
        const cases: [string, 'point' | 'comma' | 'either'][] = [
          [en.format(n), 'point'],
          [en.format(n), 'either'],
          [de.format(n), 'comma'],
          [de.format(n), 'either'],
        ];
        for (const [text, mark] of cases) {
          const read = readNumber(text, mark);
          if (read.ok) expect(read.value, `${text} (${mark})`).toBeGreaterThanOrEqual(whole);
        }
      }),
      { numRuns: 500 },
    );
    fc.assert(
      fc.property(fc.stringMatching(/^[0-9]{1,6}(,[0-9]{1,4}){1,3}$/), (text) => {
        const read = readNumber(text, 'point');
        expect(read.ok).toBe(false);
      }),
      { numRuns: 300 },
    );
  });
});

describe('printedDecimals', () => {
  // The precision a value was sent with is its printed digits after the decimal mark, trailing zeros
  // included ("5.0" is a tenth-resolution result, not 5): reporting at the instrument's resolution is
  // common practice, no source. The exponent moves the point (1.25E1 = 12.5); worked by hand.
  it('counts the digits after the mark, keeps trailing zeros, and shifts by the exponent', () => {
    expect(printedDecimals('5.0')).toBe(1);
    expect(printedDecimals('26')).toBe(0);
    expect(printedDecimals('0.050')).toBe(3);
    expect(printedDecimals('<5.00')).toBe(2);
    expect(printedDecimals('12,50')).toBe(2);
    expect(printedDecimals('.25')).toBe(2);
    expect(printedDecimals('5.')).toBe(0);
    expect(printedDecimals('1.25E1')).toBe(1);
    expect(printedDecimals('1.2E3')).toBe(0);
    expect(printedDecimals('4.5e-2')).toBe(3);
  });
});
