import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { csvField, neutraliseCell, toCsv } from '@/lib/csv';

// Formula neutralisation per the OWASP "CSV Injection" guidance (owasp.org/www-community/attacks/CSV_Injection):
// cells starting with = + - @ tab (0x09) or carriage return (0x0D) get a leading single quote.
// Field quoting per RFC 4180 §2; the output is read back with papaparse, an independent CSV parser.

describe('neutraliseCell', () => {
  it.each([
    ['=HYPERLINK("http://x.example","click")', `'=HYPERLINK("http://x.example","click")`],
    ['+1+1', "'+1+1"],
    ['-2+3', "'-2+3"],
    ['@SUM(A1:A9)', "'@SUM(A1:A9)"],
    ['\t=1+1', "'\t=1+1"],
    ['\r=1+1', "'\r=1+1"],
  ])('prefixes %j', (input, expected) => {
    expect(neutraliseCell(input)).toBe(expected);
  });
  it.each(['Biscuit', 'cCRP', ' =not leading', "O'Brien", '12.3', ''])('leaves %j as it is', (input) => {
    expect(neutraliseCell(input)).toBe(input);
  });
});

describe('csvField and toCsv', () => {
  it('quotes every text field, doubles quotes, keeps numbers as numbers', () => {
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField(-3.5)).toBe('-3.5');
    expect(csvField(null)).toBe('""');
    expect(csvField(Number.NaN)).toBe('""');
  });
  it('round-trips through papaparse with commas, newlines and formulas neutralised', () => {
    const text = toCsv(['name', 'note', 'value'], [
      ['Juniper, the cat', 'line one\nline two', 4.2],
      ['=cmd|" /C calc"!A0', '@x', -1],
    ]);
    expect(text.endsWith('\r\n')).toBe(true);
    const parsed = Papa.parse<string[]>(text.trimEnd(), { newline: '\r\n' });
    expect(parsed.errors).toEqual([]);
    expect(parsed.data).toEqual([
      ['name', 'note', 'value'],
      ['Juniper, the cat', 'line one\nline two', '4.2'],
      [`'=cmd|" /C calc"!A0`, "'@x", '-1'],
    ]);
  });
});
