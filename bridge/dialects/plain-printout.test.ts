import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { parserOutputSchema, type ParsedReading, type ParserOutput } from '../../lib/validation/readings';
import { createParsingStages } from '../parse-stage';
import { pinTimeZone } from '../testing/time-zone';
import { everyTwoPieceSplit, runThrough, splitAt, withTimeZone } from '../testing/streams';
import { dialectNames, getDialect } from './index';
import { plainPrintout } from './plain-printout';

// The slip format is our own (see plain-printout.ts); expectations below follow that description.
// Times: DATE/TIME are the lab PC's local time, so these tests pin the process time zone.

const parse = (chunks: ReadonlyArray<Buffer | string>) =>
  runThrough<ParserOutput>(chunks, createParsingStages(plainPrintout, { idle: false }));

const slip = (...fields: string[]) => ['---- RESULT ----', ...fields, '---- END ----', ''].join('\r\n');

const example = slip(
  'TEST      cCRP',
  'RESULT    37.4 mg/L',
  'SAMPLE    A-1023',
  'RUN       0042',
  'DATE      01.12.2026',
  'TIME      14:03:22',
  'SN        SIM-0001',
);

async function readingOf(text: string): Promise<ParsedReading> {
  const [out, ...rest] = await parse([text]);
  expect(rest).toEqual([]);
  if (out?.kind !== 'reading') throw new Error(`expected a reading, got ${JSON.stringify(out)}`);
  return out;
}

async function reasonOf(text: string): Promise<string> {
  const [out, ...rest] = await parse([text]);
  expect(rest).toEqual([]);
  if (out?.kind !== 'unparsed') throw new Error(`expected a fragment, got ${JSON.stringify(out)}`);
  expect(out.raw).toBe(text);
  return out.reason;
}

pinTimeZone('Europe/Berlin');

describe('plain-printout dialect', () => {
  it('is registered by name', () => {
    expect(dialectNames()).toContain('plain-printout');
    expect(getDialect('plain-printout')).toBe(plainPrintout);
    expect(() => getDialect('nope')).toThrow(/unknown dialect "nope" \(known: plain-printout/);
  });

  it('reads the example slip', async () => {
    expect(await readingOf(example)).toEqual({
      kind: 'reading',
      analyte: 'cCRP',
      value: 37.4,
      decimals: 1,
      comparator: null,
      unit: 'mg/L',
      flags: [],
      sampleId: 'A-1023',
      patientRef: null,
      // 1 December: central European standard time, UTC+1.
      measuredAt: '2026-12-01T14:03:22+01:00',
      instrumentSerial: 'SIM-0001',
      // A printout slip carries neither a range nor a result status.
      code: null,
      text: null,
      notes: [],
      referenceRange: null,
      resultStatus: null,
      raw: example,
    });
  });

  it('accepts fields in any order, blank lines inside the record, LF-only endings and tabs', async () => {
    const text = '---- RESULT ----\nSN\tSIM-0002\n\nRESULT    5.5 mg/L\n\nTEST  cCRP\n---- END ----\n';
    expect(await readingOf(text)).toMatchObject({ analyte: 'cCRP', value: 5.5, unit: 'mg/L', instrumentSerial: 'SIM-0002', raw: text });
  });

  it('reads comparators as value plus comparator', async () => {
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    <5.0 mg/L'))).toMatchObject({ value: 5, decimals: 1, comparator: '<', unit: 'mg/L' });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    >200 mg/L'))).toMatchObject({ value: 200, comparator: '>', unit: 'mg/L' });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    > 200 mg/L'))).toMatchObject({ value: 200, comparator: '>' });
  });

  it('accepts a decimal comma', async () => {
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    37,4 mg/L'))).toMatchObject({ value: 37.4 });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    <5,0 mg/L'))).toMatchObject({ value: 5, comparator: '<' });
  });

  it('reads a missing unit as null', async () => {
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    12'))).toMatchObject({ value: 12, unit: null });
  });

  it('reads an absent, empty or dashed SAMPLE as no sample id', async () => {
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L'))).toMatchObject({ sampleId: null });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'SAMPLE'))).toMatchObject({ sampleId: null });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'SAMPLE    '))).toMatchObject({ sampleId: null });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'SAMPLE    ---'))).toMatchObject({ sampleId: null });
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'SAMPLE    B 12'))).toMatchObject({ sampleId: 'B 12' });
  });

  it('leaves measuredAt null without DATE and TIME, and accepts hh:mm', async () => {
    expect(await readingOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L'))).toMatchObject({ measuredAt: null });
    const noSeconds = slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'DATE      05.01.2027', 'TIME      07:45');
    expect(await readingOf(noSeconds)).toMatchObject({ measuredAt: '2027-01-05T07:45:00+01:00' });
  });

  // ISO 8601 offsets follow the zone's rules at that moment (summer time, half-hour zones).
  it('uses the UTC offset of the lab PC time zone at that date', async () => {
    const summer = slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'DATE      15.07.2026', 'TIME      09:30:00');
    expect(await readingOf(summer)).toMatchObject({ measuredAt: '2026-07-15T09:30:00+02:00' });
    expect(await withTimeZone('Asia/Kolkata', () => readingOf(summer))).toMatchObject({ measuredAt: '2026-07-15T09:30:00+05:30' });
    expect(await withTimeZone('America/New_York', () => readingOf(summer))).toMatchObject({ measuredAt: '2026-07-15T09:30:00-04:00' });
  });

  it('turns impossible dates and times into fragments with a reason', async () => {
    const dated = (date: string, time: string) => slip('TEST      cCRP', 'RESULT    1.0 mg/L', `DATE      ${date}`, `TIME      ${time}`);
    expect(await reasonOf(dated('32.13.2026', '09:00:00'))).toBe('DATE 32.13.2026 is not a real date');
    expect(await reasonOf(dated('29.02.2025', '09:00:00'))).toBe('DATE 29.02.2025 is not a real date');
    expect(await readingOf(dated('29.02.2028', '09:00:00'))).toMatchObject({ measuredAt: '2028-02-29T09:00:00+01:00' });
    expect(await reasonOf(dated('01.12.2026', '24:00'))).toBe('TIME 24:00 is not a real time');
    expect(await reasonOf(dated('2026-12-01', '09:00'))).toBe('DATE "2026-12-01" is not dd.mm.yyyy');
    expect(await reasonOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'DATE      01.12.2026'))).toBe('DATE without TIME');
  });

  it('turns a failed run into a fragment that keeps the slip', async () => {
    const failed = slip('TEST      cCRP', 'RESULT    ERR 03', 'SAMPLE    B-0007', 'RUN       0046', 'SN        SIM-0001');
    expect(await reasonOf(failed)).toBe('RESULT "ERR 03" is not a number');
  });

  it('names what is missing or doubled', async () => {
    expect(await reasonOf(slip('RESULT    1.0 mg/L'))).toBe('no TEST line');
    expect(await reasonOf(slip('TEST      cCRP'))).toBe('no RESULT line');
    expect(await reasonOf(slip('TEST', 'RESULT    1.0 mg/L'))).toBe('TEST is empty');
    expect(await reasonOf(slip('TEST      cCRP', 'RESULT    1.0 mg/L', 'RESULT    2.0 mg/L'))).toBe('RESULT is printed twice');
  });

  it('reports a value the contract cannot hold instead of passing it on', async () => {
    expect(await reasonOf(slip('TEST      cCRP', `RESULT    1.0 ${'u'.repeat(40)}`))).toMatch(/^reading does not fit the contract: unit/);
  });

  it('turns a slip with an overlong line into a fragment', async () => {
    const text = slip('TEST      cCRP', 'RESULT    1.0 mg/L', `NOTE      ${'n'.repeat(5000)}`);
    const out = await parse([text]);
    expect(out).toHaveLength(1);
    expect(out[0]).toMatchObject({ kind: 'unparsed', raw: text, reason: 'a line of the slip is too long and was cut' });
  });
});

describe('plain-printout through the whole parse chain', () => {
  const mixed = readFileSync(new URL('../fixtures/plain-printout/mixed.txt', import.meta.url));

  it('reads the mixed fixture into readings and fragments, nothing lost', async () => {
    const out = await parse([mixed]);
    expect(out.map((o) => (o.kind === 'reading' ? `${o.comparator ?? ''}${o.value} ${o.sampleId ?? '-'}` : `unparsed: ${o.reason}`))).toEqual([
      '37.4 A-1023',
      'unparsed: text outside any record',
      '<5 -',
      '>200 -',
      '12.8 -',
      'unparsed: RESULT "ERR 03" is not a number',
      'unparsed: DATE 32.13.2026 is not a real date',
      'unparsed: record cut short: a new record started before the end line',
      '21 A-1031',
      'unparsed: text outside any record',
      'unparsed: record cut short: input ended before the end line',
    ]);
    for (const output of out) expect(parserOutputSchema.safeParse(output).success).toBe(true);
    // Every non-blank line comes out again in exactly one raw text.
    const nonBlank = (text: string) => text.split('\r\n').filter((line) => line.trim() !== '');
    expect(out.flatMap((o) => nonBlank(o.raw))).toEqual(nonBlank(mixed.toString()));
  });

  it('gives identical outputs for the bytes split at every position', async () => {
    const whole = await parse([mixed]);
    for (const chunks of everyTwoPieceSplit(mixed)) expect(await parse(chunks)).toEqual(whole);
  });

  it('gives identical outputs for random chunkings', async () => {
    const whole = await parse([mixed]);
    await fc.assert(
      fc.asyncProperty(fc.array(fc.nat({ max: mixed.length }), { maxLength: 40 }), async (cuts) => {
        expect(await parse(splitAt(mixed, cuts))).toEqual(whole);
      }),
      { numRuns: 150 },
    );
  });

  it('never throws and never drops text, whatever bytes arrive', async () => {
    const pieces = fc.constantFrom('---- RESULT ----', '---- END ----', 'TEST      cCRP', 'RESULT    1,5 mg/L', 'RESULT    x', 'DATE      31.04.2026', 'TIME      10:00', 'junk', '', '\u0000\u00ff');
    await fc.assert(
      fc.asyncProperty(fc.array(pieces, { maxLength: 30 }), fc.constantFrom('\n', '\r\n'), async (lines, eol) => {
        const text = lines.map((line) => line + eol).join('');
        const out = await parse([text]);
        for (const output of out) expect(parserOutputSchema.safeParse(output).success).toBe(true);
        const nonBlank = (t: string) => t.split(eol).filter((line) => line.trim() !== '');
        expect(out.flatMap((o) => nonBlank(o.raw))).toEqual(nonBlank(text));
      }),
      { numRuns: 200 },
    );
  });
});
