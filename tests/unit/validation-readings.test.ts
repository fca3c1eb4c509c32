import { describe, expect, it } from 'vitest';
import {
  MAX_BATCH,
  bridgeBatchSchema,
  bridgeHeartbeatSchema,
  bridgeRecordSchema,
  parsedReadingSchema,
  parserOutputSchema,
} from '@/lib/validation/readings';

const reading = (extra: Record<string, unknown> = {}) => ({ analyte: 'cCRP', value: 12.3, raw: 'RESULT 12.3 mg/L\n', ...extra });
const record = (extra: Record<string, unknown> = {}) => ({
  key: 'k-00000001',
  instrument: 'crp-reader',
  receivedAt: '2024-05-01T10:00:00Z',
  payload: { kind: 'reading', ...reading() },
  ...extra,
});
const paths = (result: { success: boolean; error?: { issues: { path: PropertyKey[] }[] } }) =>
  (result.error?.issues ?? []).map((i) => i.path.join('.'));

describe('parsedReadingSchema', () => {
  it('fills the optional fields with null / [] defaults', () => {
    // Product contract (lib/validation/readings.ts): absent optional fields become explicit nulls.
    expect(parsedReadingSchema.parse(reading())).toEqual({
      kind: 'reading',
      analyte: 'cCRP',
      value: 12.3,
      code: null,
      text: null,
      notes: [],
      comparator: null,
      unit: null,
      flags: [],
      sampleId: null,
      patientRef: null,
      measuredAt: null,
      instrumentSerial: null,
      referenceRange: null,
      resultStatus: null,
      raw: 'RESULT 12.3 mg/L\n',
    });
  });

  it('takes the instrument’s own range and result status, and only the statuses it knows', () => {
    expect(parsedReadingSchema.parse(reading({ referenceRange: '3.9 to 6.1', resultStatus: 'corrected' }))).toMatchObject({
      referenceRange: '3.9 to 6.1',
      resultStatus: 'corrected',
    });
    expect(parsedReadingSchema.safeParse(reading({ resultStatus: 'F' })).success).toBe(false);
  });

  it.each([
    // RFC 3339 §5.8 examples (from memory): fractional seconds with Z, and a negative offset.
    '1985-04-12T23:20:50.52Z',
    '1996-12-19T16:39:57-08:00',
    '2024-05-01T10:00:00+01:00',
    '2024-05-01T10:00:00.000Z',
  ])('accepts measuredAt %s (date-time with an offset, RFC 3339 §5.6)', (measuredAt) => {
    expect(parsedReadingSchema.safeParse(reading({ measuredAt })).success).toBe(true);
  });

  it.each([
    ['2024-05-01T10:00:00', 'no offset: a local time names no instant (RFC 3339 §4.4)'],
    ['2024-05-01', 'date only'],
    ['2024-05-01 10:00:00Z', 'ISO 8601 needs the T; RFC 3339 §5.6 lets an application pick a space, this contract does not'],
    ['2024-05-01T10:00:00+0100', 'RFC 3339 time-numoffset needs the colon'],
    ['2024-13-01T10:00:00Z', 'month 13'],
    ['2023-02-29T10:00:00Z', '2023 is not a leap year'],
    ['yesterday', 'not a date'],
  ])('rejects measuredAt %s (%s)', (measuredAt) => {
    const result = parsedReadingSchema.safeParse(reading({ measuredAt }));
    expect(result.success).toBe(false);
    expect(paths(result)).toEqual(['measuredAt']);
  });

  it.each(['<', '>'])('accepts comparator %s (below / above the measuring range)', (comparator) => {
    expect(parsedReadingSchema.parse(reading({ comparator, value: 5 })).comparator).toBe(comparator);
  });

  it.each(['<=', '>=', '=', '≤', '~', ''])('rejects comparator %j (only < or > are in the contract)', (comparator) => {
    const result = parsedReadingSchema.safeParse(reading({ comparator }));
    expect(result.success).toBe(false);
    expect(paths(result)).toEqual(['comparator']);
  });

  it('requires value to be present: a number or an explicit null', () => {
    expect(parsedReadingSchema.safeParse(reading({ value: null })).success).toBe(true);
    const withoutValue: Record<string, unknown> = { ...reading() };
    delete withoutValue.value;
    expect(paths(parsedReadingSchema.safeParse(withoutValue))).toEqual(['value']);
    expect(paths(parsedReadingSchema.safeParse(reading({ value: '12.3' })))).toEqual(['value']);
  });

  it('rejects non-finite values (JSON has no NaN or Infinity: RFC 8259 §6)', () => {
    expect(parsedReadingSchema.safeParse(reading({ value: Number.POSITIVE_INFINITY })).success).toBe(false);
    expect(parsedReadingSchema.safeParse(reading({ value: Number.NaN })).success).toBe(false);
  });

  it('trims the analyte and refuses a blank one', () => {
    expect(parsedReadingSchema.parse(reading({ analyte: '  GLU ' })).analyte).toBe('GLU');
    expect(paths(parsedReadingSchema.safeParse(reading({ analyte: '   ' })))).toEqual(['analyte']);
  });
});

describe('parserOutputSchema (reading or unparsed fragment)', () => {
  it('takes a fragment with raw bytes and a reason', () => {
    expect(parserOutputSchema.parse({ kind: 'unparsed', raw: '\u0002garbage', reason: 'no RESULT line' })).toEqual({
      kind: 'unparsed',
      raw: '\u0002garbage',
      reason: 'no RESULT line',
    });
  });

  it('requires a reason on a fragment', () => {
    expect(parserOutputSchema.safeParse({ kind: 'unparsed', raw: 'x' }).success).toBe(false);
  });

  it('rejects an unknown kind', () => {
    expect(parserOutputSchema.safeParse({ kind: 'image', raw: 'x' }).success).toBe(false);
  });
});

describe('bridgeRecordSchema', () => {
  it.each(['k-00000001', 'spool.2024-05-01:0001', 'ABCDEFGH', 'a_b.c:d-e', 'x'.repeat(128)])('accepts key %s', (key) => {
    expect(bridgeRecordSchema.safeParse(record({ key })).success).toBe(true);
  });

  it.each([
    ['short', 'fewer than 8 characters'],
    ['x'.repeat(129), 'more than 128 characters'],
    ['has space 01', 'space'],
    ['a/b/c/d/e/f', 'slash'],
    ['ключ-12345678', 'non-ASCII letters'],
    ['k-0001%2F0', 'percent'],
  ])('rejects key %j (%s)', (key) => {
    const result = bridgeRecordSchema.safeParse(record({ key }));
    expect(result.success).toBe(false);
    expect(paths(result)).toEqual(['key']);
  });

  it('requires an offset on receivedAt too (RFC 3339 §4.4)', () => {
    expect(paths(bridgeRecordSchema.safeParse(record({ receivedAt: '2024-05-01T10:00:00' })))).toEqual(['receivedAt']);
  });

  it('reports nested payload errors with their full path', () => {
    const result = bridgeRecordSchema.safeParse(record({ payload: { kind: 'reading', ...reading({ measuredAt: 'soon' }) } }));
    expect(paths(result)).toEqual(['payload.measuredAt']);
  });
});

describe('bridgeBatchSchema', () => {
  const batch = (n: number) => ({
    records: Array.from({ length: n }, (_, i) => record({ key: `k-${String(i).padStart(8, '0')}` })),
  });

  it('holds at most 200 records', () => {
    expect(MAX_BATCH).toBe(200);
  });

  it('accepts 1 and 200 records', () => {
    expect(bridgeBatchSchema.safeParse(batch(1)).success).toBe(true);
    expect(bridgeBatchSchema.safeParse(batch(200)).success).toBe(true);
  });

  it('rejects an empty batch and one of 201 records, on the records path', () => {
    expect(paths(bridgeBatchSchema.safeParse(batch(0)))).toEqual(['records']);
    expect(paths(bridgeBatchSchema.safeParse(batch(201)))).toEqual(['records']);
  });

  it('names the failing record by index', () => {
    const b = batch(3);
    (b.records[2].payload as Record<string, unknown>).comparator = '=';
    expect(paths(bridgeBatchSchema.safeParse(b))).toEqual(['records.2.payload.comparator']);
  });
});

describe('bridgeHeartbeatSchema', () => {
  it('needs a non-negative integer spool depth and defaults sources to []', () => {
    expect(bridgeHeartbeatSchema.parse({ spoolDepth: 0 })).toEqual({ spoolDepth: 0, sources: [] });
    expect(bridgeHeartbeatSchema.safeParse({ spoolDepth: -1 }).success).toBe(false);
    expect(bridgeHeartbeatSchema.safeParse({ spoolDepth: 1.5 }).success).toBe(false);
    expect(bridgeHeartbeatSchema.safeParse({}).success).toBe(false);
  });

  it('knows the source states open, connecting, closed, error only', () => {
    expect(bridgeHeartbeatSchema.safeParse({ spoolDepth: 1, sources: [{ instrument: 'crp-reader', state: 'error', detail: 'EIO' }] }).success).toBe(true);
    expect(bridgeHeartbeatSchema.safeParse({ spoolDepth: 1, sources: [{ instrument: 'crp-reader', state: 'sleeping' }] }).success).toBe(false);
  });
});
