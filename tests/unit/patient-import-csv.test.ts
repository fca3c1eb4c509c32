import { describe, expect, it } from 'vitest';
import { checkRows, ImportFileError, parseDate, parseImportFile, suggestMapping } from '@/lib/import/patients-csv';

// Patient CSV parsing and checks. Sources: RFC 4180 §2 (quoted fields may hold commas, quotes and line
// breaks), the Unicode standard §23.8 (U+FEFF as a byte-order mark at the start of UTF-8 text), WHATWG
// Encoding (fatal UTF-8 decoding), and the Gregorian calendar (30 days in April; 2023 not a leap year).
// The rows are invented demo data.

const utf8 = (s: string) => new TextEncoder().encode(s);
const HEADER = 'Record No,Patient Name,Species,Breed,Sex,DOB,Weight,Owner,Phone,Email\n';

describe('parseImportFile', () => {
  it('drops a UTF-8 byte-order mark, so the first header is read as it is', () => {
    const bytes = new Uint8Array([0xef, 0xbb, 0xbf, ...utf8(HEADER + 'A-1,Tansy,dog,,f,,,,,\n')]);
    const { headers, rows } = parseImportFile(bytes);
    expect(headers[0]).toBe('Record No');
    expect(suggestMapping(headers).recordNumber).toBe(0);
    expect(rows).toHaveLength(1);
  });

  it('keeps commas, doubled quotes and line breaks inside quoted fields (RFC 4180 §2.6–2.7)', () => {
    const { rows } = parseImportFile(utf8(HEADER + 'A-2,"Pip, the ""small"" one",cat,"Domestic\nshorthair",fs,,,"Lark, Edda",,\n'));
    expect(rows[0][1]).toBe('Pip, the "small" one');
    expect(rows[0][3]).toBe('Domestic\nshorthair');
    expect(rows[0][7]).toBe('Lark, Edda');
  });

  it('refuses bytes that are not UTF-8 (a Windows-1252 "é" is the lone byte 0xE9)', () => {
    const latin1 = new Uint8Array([...utf8(HEADER + 'A-3,Ren'), 0xe9, ...utf8(',cat,,,,,,,\n')]);
    expect(() => parseImportFile(latin1)).toThrow(ImportFileError);
    try {
      parseImportFile(latin1);
    } catch (error) {
      expect((error as ImportFileError).code).toBe('not_utf8');
    }
  });

  it('accepts real UTF-8 accents', () => {
    expect(parseImportFile(utf8(HEADER + 'A-4,Renée,cat,,,,,,,\n')).rows[0][1]).toBe('Renée');
  });

  it('has size and row limits with clear messages', () => {
    expect(() => parseImportFile(new Uint8Array(2 * 1024 * 1024 + 1))).toThrow(/larger than 2 MB/);
    const many = HEADER + Array.from({ length: 5001 }, (_, i) => `R-${i},N,dog,,,,,,,`).join('\n');
    expect(() => parseImportFile(utf8(many))).toThrow(/at most 5000/);
    expect(() => parseImportFile(utf8(HEADER))).toThrow(/no patients/);
  });
});

describe('parseDate', () => {
  it.each([
    ['2020-02-29', 'YYYY-MM-DD', '2020-02-29'],
    ['2023-02-29', 'YYYY-MM-DD', null],
    ['31/04/2021', 'DD/MM/YYYY', null],
    ['30/04/2021', 'DD/MM/YYYY', '2021-04-30'],
    ['04/30/2021', 'MM/DD/YYYY', '2021-04-30'],
    ['2021-13-01', 'YYYY-MM-DD', null],
    ['last spring', 'YYYY-MM-DD', null],
  ] as const)('%s as %s → %s', (value, format, expected) => {
    expect(parseDate(value, format)).toBe(expected);
  });
});

describe('checkRows', () => {
  const parse = (body: string) => parseImportFile(utf8(HEADER + body));
  it('maps species and sex words, weights with a decimal comma, and dates', () => {
    const { headers, rows } = parse('B-1,Moss,Canine,Collie,MN,2019-05-01,"21,5",Edda Lark,+44 1632 960001,EDDA@example.org\n');
    const [row] = checkRows(rows, suggestMapping(headers), { dateFormat: 'YYYY-MM-DD', today: '2026-01-01' });
    expect(row.errors).toEqual([]);
    expect(row.values).toMatchObject({ recordNumber: 'B-1', species: 'dog', sex: 'male_neutered', dateOfBirth: '2019-05-01', weightKg: 21.5, ownerEmail: 'edda@example.org' });
  });
  it('names every problem of a row: bad date, unknown species, duplicate record number in the file', () => {
    const { headers, rows } = parse('C-1,Ash,dragon,,,2023-02-29,,,,\nC-1,Ash again,cat,,,,,,,\nC-2,,cat,,,2030-01-01,-3,,,not-an-email\n');
    const checked = checkRows(rows, suggestMapping(headers), { dateFormat: 'YYYY-MM-DD', today: '2026-01-01' });
    expect(checked[0].errors.join(' ')).toMatch(/Species “dragon”.*Date of birth “2023-02-29” is not a real date/s);
    expect(checked[1].errors).toEqual(['Record number C-1 is also on row 2; each patient once per file.']);
    expect(checked[2].row).toBe(4);
    expect(checked[2].errors.join(' ')).toMatch(/Name is empty.*in the future.*not a weight.*not an e-mail/s);
  });
  it('refuses a mapping without the required fields', () => {
    expect(() => checkRows([['x']], { recordNumber: 0 }, { dateFormat: 'YYYY-MM-DD' })).toThrow(/Name, Species/);
  });
});
