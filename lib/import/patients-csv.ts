// Patients from a practice-management system's CSV export: decoding, column mapping, per-row checks.
// Pure: lib/import/patients.ts writes. IMPORT_FIELDS is the one place that names the patient fields an
// import can fill; a new patient field is one entry here and one line where rows are written.
import Papa from 'papaparse';
import { patientSex, species } from '@/db/schema';

export const IMPORT_LIMITS = { maxBytes: 2 * 1024 * 1024, maxRows: 5000 } as const;

export type ImportFieldKey = 'recordNumber' | 'name' | 'species' | 'breed' | 'sex' | 'dateOfBirth' | 'weightKg' | 'ownerName' | 'ownerPhone' | 'ownerEmail';

export const IMPORT_FIELDS: { key: ImportFieldKey; label: string; required: boolean; aliases: string[] }[] = [
  { key: 'recordNumber', label: 'Record number', required: true, aliases: ['record number', 'record no', 'record', 'patient id', 'patient number', 'chart number', 'file number', 'id'] },
  { key: 'name', label: 'Name', required: true, aliases: ['name', 'patient name', 'animal name', 'pet name', 'patient'] },
  { key: 'species', label: 'Species', required: true, aliases: ['species', 'animal type', 'kind'] },
  { key: 'breed', label: 'Breed', required: false, aliases: ['breed'] },
  { key: 'sex', label: 'Sex', required: false, aliases: ['sex', 'gender'] },
  { key: 'dateOfBirth', label: 'Date of birth', required: false, aliases: ['date of birth', 'dob', 'birth date', 'birthdate', 'born'] },
  { key: 'weightKg', label: 'Weight (kg)', required: false, aliases: ['weight', 'weight kg', 'weight (kg)'] },
  { key: 'ownerName', label: 'Owner name', required: false, aliases: ['owner', 'owner name', 'client', 'client name'] },
  { key: 'ownerPhone', label: 'Owner phone', required: false, aliases: ['phone', 'owner phone', 'client phone', 'telephone', 'mobile'] },
  { key: 'ownerEmail', label: 'Owner e-mail', required: false, aliases: ['email', 'e-mail', 'owner email', 'client email'] },
];

/** Column index per field (null: not imported). */
export type ColumnMapping = Partial<Record<ImportFieldKey, number | null>>;
export type DateFormat = 'YYYY-MM-DD' | 'DD/MM/YYYY' | 'MM/DD/YYYY';

export class ImportFileError extends Error {
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}

/**
 * Bytes to rows. UTF-8 only (with or without a byte-order mark): bytes that are not UTF-8 (a file saved
 * as Windows-1252, say) are refused with a clear message rather than imported as mangled names.
 */
export function parseImportFile(bytes: Uint8Array): { headers: string[]; rows: string[][] } {
  if (bytes.byteLength > IMPORT_LIMITS.maxBytes) {
    throw new ImportFileError('file_too_large', `The file is larger than ${IMPORT_LIMITS.maxBytes / 1024 / 1024} MB; split it into smaller files.`);
  }
  let text: string;
  try {
    // WHATWG Encoding: fatal decoding throws on invalid UTF-8; the decoder drops a leading BOM itself.
    text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw new ImportFileError('not_utf8', 'The file is not UTF-8 text. Export it again as “CSV UTF-8” from the practice system (or save it with UTF-8 encoding).');
  }
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const parsed = Papa.parse<string[]>(text, { skipEmptyLines: 'greedy' });
  const fatal = parsed.errors.find((e) => e.type === 'Quotes');
  if (fatal) throw new ImportFileError('malformed_csv', `The CSV is malformed near row ${(fatal.row ?? 0) + 1}: ${fatal.message}.`);
  const [headers, ...rows] = parsed.data;
  if (!headers || headers.length === 0) throw new ImportFileError('empty', 'The file has no header row.');
  if (rows.length === 0) throw new ImportFileError('no_rows', 'The file has a header row but no patients.');
  if (rows.length > IMPORT_LIMITS.maxRows) throw new ImportFileError('too_many_rows', `The file has ${rows.length} rows; at most ${IMPORT_LIMITS.maxRows} can be imported at once.`);
  return { headers: headers.map((h) => h.trim()), rows };
}

const normalise = (s: string) => s.toLowerCase().replace(/[_\s.]+/g, ' ').trim();

/** A first guess at the mapping from the header names; the admin confirms or changes it in the preview. */
export function suggestMapping(headers: string[]): ColumnMapping {
  const mapping: ColumnMapping = {};
  const taken = new Set<number>();
  for (const field of IMPORT_FIELDS) {
    const index = headers.findIndex((h, i) => !taken.has(i) && (field.aliases.includes(normalise(h)) || normalise(h) === normalise(field.label)));
    mapping[field.key] = index >= 0 ? index : null;
    if (index >= 0) taken.add(index);
  }
  return mapping;
}

const SPECIES_WORDS: Record<string, (typeof species.enumValues)[number]> = {
  dog: 'dog', canine: 'dog', k9: 'dog', cat: 'cat', feline: 'cat', rabbit: 'rabbit', lapine: 'rabbit', ferret: 'ferret',
  bird: 'bird', avian: 'bird', reptile: 'reptile', other: 'other',
};
const SEX_WORDS: Record<string, (typeof patientSex.enumValues)[number]> = {
  m: 'male', male: 'male', mn: 'male_neutered', 'male neutered': 'male_neutered', neutered: 'male_neutered', castrated: 'male_neutered',
  f: 'female', female: 'female', fs: 'female_spayed', 'female spayed': 'female_spayed', spayed: 'female_spayed',
  u: 'unknown', unknown: 'unknown', '': 'unknown',
};

/** A calendar date in the given format, as YYYY-MM-DD; null when it is not a real date. */
export function parseDate(value: string, format: DateFormat): string | null {
  const patterns: Record<DateFormat, RegExp> = {
    'YYYY-MM-DD': /^(?<y>\d{4})-(?<m>\d{1,2})-(?<d>\d{1,2})$/,
    'DD/MM/YYYY': /^(?<d>\d{1,2})[/.-](?<m>\d{1,2})[/.-](?<y>\d{4})$/,
    'MM/DD/YYYY': /^(?<m>\d{1,2})[/.-](?<d>\d{1,2})[/.-](?<y>\d{4})$/,
  };
  const match = patterns[format].exec(value.trim());
  if (!match?.groups) return null;
  const y = Number(match.groups.y);
  const m = Number(match.groups.m);
  const d = Number(match.groups.d);
  const date = new Date(Date.UTC(y, m - 1, d));
  // Rejects 31 April, 29 February in a common year and the like (the Date rolls over; compare back).
  if (date.getUTCFullYear() !== y || date.getUTCMonth() !== m - 1 || date.getUTCDate() !== d) return null;
  return date.toISOString().slice(0, 10);
}

export interface ImportRowValues {
  recordNumber: string;
  name: string;
  species: (typeof species.enumValues)[number];
  breed: string | null;
  sex: (typeof patientSex.enumValues)[number];
  dateOfBirth: string | null;
  weightKg: number | null;
  ownerName: string | null;
  ownerPhone: string | null;
  ownerEmail: string | null;
}

export interface CheckedRow {
  /** 1-based line of the data row in the file, counting the header as row 1. */
  row: number;
  values: ImportRowValues | null;
  errors: string[];
}

const EMAIL = /^[^\s@]+@[^\s@]+\.[^\s@]+$/;

/** Each row against the mapping: the values to write, or what is wrong with the row. */
export function checkRows(rows: string[][], mapping: ColumnMapping, options: { dateFormat: DateFormat; today?: string }): CheckedRow[] {
  const missing = IMPORT_FIELDS.filter((f) => f.required && (mapping[f.key] === null || mapping[f.key] === undefined));
  if (missing.length) throw new ImportFileError('mapping_incomplete', `Choose a column for: ${missing.map((f) => f.label).join(', ')}.`);
  const today = options.today ?? new Date().toISOString().slice(0, 10);
  const seen = new Map<string, number>();
  return rows.map((cells, i) => {
    const row = i + 2;
    const cell = (key: ImportFieldKey) => {
      const index = mapping[key];
      return index === null || index === undefined ? '' : (cells[index] ?? '').trim();
    };
    const errors: string[] = [];
    const recordNumber = cell('recordNumber');
    if (!recordNumber) errors.push('Record number is empty.');
    else if (recordNumber.length > 64) errors.push('Record number is longer than 64 characters.');
    const name = cell('name');
    if (!name) errors.push('Name is empty.');
    const speciesText = cell('species');
    const speciesValue = SPECIES_WORDS[normalise(speciesText)];
    if (!speciesValue) errors.push(`Species “${speciesText}” is not one Benchwire knows (dog, cat, rabbit, ferret, bird, reptile, other).`);
    const sexText = cell('sex');
    const sexValue = SEX_WORDS[normalise(sexText)];
    if (!sexValue) errors.push(`Sex “${sexText}” is not recognised (male, female, male neutered, female spayed, unknown).`);
    const dobText = cell('dateOfBirth');
    let dateOfBirth: string | null = null;
    if (dobText) {
      dateOfBirth = parseDate(dobText, options.dateFormat);
      if (!dateOfBirth) errors.push(`Date of birth “${dobText}” is not a real date in the format ${options.dateFormat}.`);
      else if (dateOfBirth > today) errors.push(`Date of birth ${dateOfBirth} is in the future.`);
    }
    const weightText = cell('weightKg').replace(',', '.');
    let weightKg: number | null = null;
    if (weightText) {
      weightKg = Number(weightText);
      if (!Number.isFinite(weightKg) || weightKg <= 0 || weightKg > 1000) errors.push(`Weight “${cell('weightKg')}” is not a weight in kg.`);
    }
    const ownerEmail = cell('ownerEmail') || null;
    if (ownerEmail && !EMAIL.test(ownerEmail)) errors.push(`Owner e-mail “${ownerEmail}” is not an e-mail address.`);
    if (recordNumber) {
      const first = seen.get(recordNumber.toLowerCase());
      if (first) errors.push(`Record number ${recordNumber} is also on row ${first}; each patient once per file.`);
      else seen.set(recordNumber.toLowerCase(), row);
    }
    if (errors.length) return { row, values: null, errors };
    return {
      row,
      errors,
      values: {
        recordNumber,
        name,
        species: speciesValue!,
        breed: cell('breed') || null,
        sex: sexValue!,
        dateOfBirth,
        weightKg,
        ownerName: cell('ownerName') || null,
        ownerPhone: cell('ownerPhone') || null,
        ownerEmail: ownerEmail?.toLowerCase() ?? null,
      },
    };
  });
}
