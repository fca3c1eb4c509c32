import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { profileDefinitionSchema, type ProfileDefinitionInput } from '../../lib/validation/profile';
import type { ParserOutput } from '../../lib/validation/readings';
import { createParsingStages } from '../parse-stage';
import { pinTimeZone } from '../testing/time-zone';
import { runThrough, splitAt } from '../testing/streams';
import { loadProfile, previewProfile, profileDialect } from './profile';

// The profile format is ours (lib/validation/profile.ts); expectations follow its field descriptions.
// The printouts are invented. Times are the lab PC's local time, so the time zone is pinned.

const panel: ProfileDefinitionInput = {
  analyzer: 'Invented benchtop chemistry printer',
  record: { start: '^\\*\\*\\* CHEM PANEL', end: '^\\*\\*\\* END' },
  fields: [
    { label: 'Sample', pattern: '^ID:\\s*(?<sampleId>\\S+)', required: true },
    { label: 'Patient', pattern: '^PATIENT:\\s*(?<patientRef>\\S+)' },
    { label: 'When', pattern: '^DATE\\s+(?<date>\\S+)\\s+(?<time>\\S+)' },
    { label: 'Result', pattern: '^(?<analyte>[A-Z]{2,5})\\s+(?<value>[<>]?\\s*[\\d.,]+)\\s+(?<unit>\\S+)(?:\\s+(?<flag>[HL]))?$', repeats: true },
  ],
  decimalComma: true,
  dateFormat: 'DD.MM.YYYY',
  timeFormat: 'HH:mm',
};
const definition = await profileDefinitionSchema.parseAsync(panel);
const printout = [
  '*** CHEM PANEL ***',
  'ID: S-5001',
  'PATIENT: PT-12',
  'DATE 01.12.2026 14:03',
  'GLU      5,2 mmol/L',
  'CREA   <18   umol/L  L',
  'ALT     43   U/L     H',
  '*** END ***',
  '',
].join('\r\n');

pinTimeZone('Europe/Berlin');

describe('previewProfile', () => {
  it('reads one reading per repeating result line, with the record\'s own fields', async () => {
    const preview = previewProfile(definition, `PAPER OUT\r\n${printout}`);
    const common = { sampleId: 'S-5001', patientRef: 'PT-12', measuredAt: '2026-12-01T14:03:00+01:00', instrumentSerial: null, referenceRange: null, resultStatus: null, code: null, text: null, notes: [], raw: printout };
    expect(preview.outputs).toEqual([
      { kind: 'unparsed', raw: 'PAPER OUT\r\n', reason: 'text outside any record' },
      { kind: 'reading', analyte: 'GLU', value: 5.2, decimals: 1, comparator: null, unit: 'mmol/L', flags: [], ...common },
      { kind: 'reading', analyte: 'CREA', value: 18, decimals: 0, comparator: '<', unit: 'umol/L', flags: ['L'], ...common },
      { kind: 'reading', analyte: 'ALT', value: 43, decimals: 0, comparator: null, unit: 'U/L', flags: ['H'], ...common },
    ]);
    expect(preview.unparsed).toEqual([preview.outputs[0]]);
    expect(preview.records).toHaveLength(1);
    expect(preview.records[0].fields).toEqual({ sampleId: 'S-5001', patientRef: 'PT-12', date: '01.12.2026', time: '14:03' });
    expect(preview.records[0].lines.map((line) => line.fields)).toEqual([[], ['Sample'], ['Patient'], ['When'], ['Result'], ['Result'], ['Result'], []]);
    expect(preview.records[0].lines[5].captures).toEqual({ analyte: 'CREA', value: '<18', unit: 'umol/L', flag: 'L' });
  });

  it('says why a record is not read: a required line missing, a value that is no number, an impossible date', async () => {
    const reasons = (text: string) => previewProfile(definition, text).outputs.map((o) => (o.kind === 'unparsed' ? o.reason : o.kind));
    expect(reasons(printout.replace('ID: S-5001\r\n', ''))).toEqual(['no line matches "Sample"']);
    expect(reasons(printout.replace('5,2', '5.2'))).toEqual(['GLU: value "5.2" is not a number with a decimal comma', 'reading', 'reading']);
    expect(reasons(printout.replace('01.12.2026', '31.11.2026'))).toEqual(Array(3).fill('GLU: date "31.11.2026" is not a real date').map((r, i) => r.replace('GLU', ['GLU', 'CREA', 'ALT'][i])));
    expect(reasons(printout.replace('*** END ***\r\n', ''))).toEqual(['record cut short: input ended before the end line']);
  });

  // A single-test reader: the test and unit come from the profile; a form feed ejects each slip.
  it('reads form-feed slips of a single-test reader with a 12-hour clock', async () => {
    const slip = await profileDefinitionSchema.parseAsync({
      analyzer: 'Invented SDMA reader',
      record: { formFeed: true },
      fields: [
        { label: 'Result', pattern: '^RESULT\\s+(?<value>[<>]?[\\d.]+)', required: true },
        { label: 'Time', pattern: '^(?<date>\\d\\d/\\d\\d/\\d\\d) (?<time>.+)$' },
      ],
      analyte: 'SDMA',
      unit: 'ug/dL',
      dateFormat: 'YY/MM/DD',
      timeFormat: 'hh:mm a',
    });
    const out = previewProfile(slip, 'RESULT  14\n26/12/01 02:03 PM\n\fRESULT >100\n26/12/01 12:10 AM\n\f').outputs;
    expect(out).toEqual([
      expect.objectContaining({ analyte: 'SDMA', value: 14, unit: 'ug/dL', measuredAt: '2026-12-01T14:03:00+01:00', raw: 'RESULT  14\n26/12/01 02:03 PM\n\f' }),
      expect.objectContaining({ analyte: 'SDMA', value: 100, comparator: '>', measuredAt: '2026-12-01T00:10:00+01:00' }),
    ]);
  });
});

describe('loadProfile', () => {
  it('refuses a bad profile with a message that points at the field', async () => {
    expect(await loadProfile({ ...panel, fields: [{ label: 'x', pattern: '(?<value' }] })).toEqual({ ok: false, message: expect.stringMatching(/^fields\.0\.pattern: Not a valid pattern/) });
    expect(await loadProfile({ ...panel, record: {} })).toEqual({ ok: false, message: expect.stringMatching(/^record: Say how a record is told apart/) });
    expect(await loadProfile(panel)).toEqual({ ok: true, definition });
  });
});

describe('profile dialect on a byte stream', () => {
  const parse = (chunks: ReadonlyArray<Buffer | string>) => runThrough<ParserOutput>(chunks, createParsingStages(profileDialect(definition), { idle: false }));

  it('gives what the preview gives, for any split of the bytes', async () => {
    const bytes = Buffer.from(`noise\r${printout}\f${printout.replace(/\r\n/g, '\r')}`);
    const whole = await parse([bytes]);
    expect(whole).toEqual(previewProfile(definition, bytes.toString()).outputs);
    expect(whole.filter((o) => o.kind === 'reading')).toHaveLength(6);
    await fc.assert(
      fc.asyncProperty(fc.array(fc.nat({ max: bytes.length }), { maxLength: 12 }), async (cuts) => {
        expect(await parse(splitAt(bytes, cuts))).toEqual(whole);
      }),
      { numRuns: 100 },
    );
  });

  it('never throws on random bytes, and a printout after them is still read', async () => {
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 300 }), async (noise) => {
        const out = await parse([Buffer.from(noise), '\r\n*** END ***\r\n', printout]);
        expect(out.slice(-3).map((o) => (o.kind === 'reading' ? o.analyte : o.reason))).toEqual(['GLU', 'CREA', 'ALT']);
      }),
      { numRuns: 150 },
    );
  });
});

const single = await profileDefinitionSchema.parseAsync({
  analyzer: 'Invented single-test lactate printer',
  record: { start: '^LACTATE TEST', idleMs: 600_000 },
  fields: [
    { label: 'Sample', pattern: '^SAMPLE\\s+(?<sampleId>\\S+)' },
    { label: 'Result', pattern: '^(?<analyte>LAC)\\s+(?<value>[\\d.]+)\\s+(?<unit>mmol/L)$' },
  ],
});

describe('a start-only profile whose fields are all read once', () => {
  // Our profile format (lib/validation/profile.ts): without an end line a record ends at the next start
  // or when the line goes quiet. When every field it defines has been read and none repeats, nothing
  // more can belong to the record, so it ends at that line. The longest quiet time the format allows
  // makes any wait visible: the reading must come from the bytes alone.

  it('ends the record at its last field, without waiting for the next start or the quiet time', async () => {
    const stages = createParsingStages(profileDialect(single), {});
    const first = stages[0];
    const last = stages[stages.length - 1];
    for (let i = 0; i + 1 < stages.length; i++) stages[i].pipe(stages[i + 1]);
    const reading = new Promise<ParserOutput>((resolve) => last.once('data', resolve));
    first.write(Buffer.from('LACTATE TEST\r\nSAMPLE L-7\r\nLAC   2.4 mmol/L\r\n', 'latin1'));
    expect(await reading).toMatchObject({ kind: 'reading', analyte: 'LAC', value: 2.4, unit: 'mmol/L', sampleId: 'L-7' });
    for (const stage of stages) stage.destroy();
  });

  it('a profile with a repeating field still waits (more results may follow)', async () => {
    const framing = profileDialect(await profileDefinitionSchema.parseAsync({ ...single, fields: [...single.fields, { label: 'More', pattern: '^X (?<value>\\d+)', repeats: true }] })).framing;
    expect(framing?.complete).toBeUndefined();
  });
});

describe('patterns run in a linear-time engine', () => {
  // A nested quantifier such as ^(a+)+$ takes time exponential in the line's length in a backtracking
  // engine on a line that almost matches (the classic ReDoS case, OWASP "Regular expression Denial of
  // Service"); RE2's automaton takes linear time (RE2 syntax documentation: no backreferences, no lookaround).
  // No timing is asserted: under the old engine this test would not finish, and vitest's timeout fails it.
  const catastrophic: ProfileDefinitionInput = {
    analyzer: 'Invented single-test reader',
    record: { formFeed: true },
    analyte: 'CRP',
    fields: [
      { label: 'Filler', pattern: '^(a+)+$' },
      { label: 'Result', pattern: '^RESULT\\s+(?<value>\\d+)', required: true },
    ],
  };

  it('accepts ^(a+)+$ and answers correctly on a 4,000-character line that almost matches (just under the line limit)', async () => {
    const loaded = await loadProfile(catastrophic);
    expect(loaded.ok).toBe(true);
    const almost = `${'a'.repeat(4_000)}!`;
    const preview = previewProfile(await profileDefinitionSchema.parseAsync(catastrophic), `${almost}\nRESULT 12\n\f`);
    expect(preview.records).toHaveLength(1);
    // The filler line does not match (it ends in "!"); the result line does.
    expect(preview.records[0].lines.map((line) => line.fields)).toEqual([[], ['Result'], []]); // the last line is the form feed
    expect(preview.outputs).toEqual([expect.objectContaining({ kind: 'reading', analyte: 'CRP', value: 12 })]);
    const whole = previewProfile(await profileDefinitionSchema.parseAsync(catastrophic), `${'a'.repeat(4_000)}\nRESULT 7\n\f`);
    expect(whole.records[0].lines.map((line) => line.fields)).toEqual([['Filler'], ['Result'], []]);
  });

  it('refuses backreferences and lookaround at load, naming the field and why', async () => {
    const withPattern = (pattern: string) => ({ ...catastrophic, fields: [catastrophic.fields[1], { label: 'Extra', pattern }] });
    expect(await loadProfile(withPattern('^(\\d)\\1$'))).toEqual({ ok: false, message: expect.stringMatching(/^fields\.1\.pattern: Not a valid pattern: a backreference/) });
    expect(await loadProfile(withPattern('^(?<sampleId>\\S+)\\k<sampleId>'))).toEqual({ ok: false, message: expect.stringMatching(/^fields\.1\.pattern: .*backreference/) });
    for (const look of ['^ID(?=:)', '^ID(?!X)', '(?<=ID:)\\S+', '(?<!X)ID']) {
      expect(await loadProfile(withPattern(look))).toEqual({ ok: false, message: expect.stringMatching(/^fields\.1\.pattern: Not a valid pattern: lookahead and lookbehind/) });
    }
    expect(await loadProfile({ ...catastrophic, record: { start: 'x(?=y)' } })).toEqual({ ok: false, message: expect.stringMatching(/^record\.start: .*lookahead/) });
  });
});

// A single-test reader that prints no sample ID: a QC slip says so only in a line of its own. Invented
// slips; that QC must never land on a patient is common practice, no source.
const reader = await profileDefinitionSchema.parseAsync({
  analyzer: 'Invented single-test CRP reader',
  record: { formFeed: true },
  fields: [
    { label: 'Result', pattern: '^CRP\\s+(?<value>[<>]?[\\d.]+)\\s+(?<unit>\\S+)', required: true },
    { label: 'Time', pattern: '^(?<date>\\d{4}-\\d\\d-\\d\\d) (?<time>\\d\\d:\\d\\d)$' },
  ],
  analyte: 'cCRP',
  control: { pattern: '^QC\\s+LEVEL\\s+(?<level>\\S+)' },
});

describe('a control line marks a slip as a control run', () => {
  const patientSlip = 'CRP  12.4 mg/L\n2026-12-01 09:15\n\f';
  const qcSlip = 'QC LEVEL 2\nCRP  61.0 mg/L\n2026-12-01 09:20\n\f';
  const unlevelledQc = 'QC LEVEL\nCONTROL RUN\nCRP  11.8 mg/L\n2026-12-01 09:25\n\f';
  const capture = patientSlip + qcSlip + unlevelledQc;

  it('gives every result of a slip with the line the control role and the printed level; others stay patient slips', async () => {
    const preview = previewProfile(reader, capture);
    expect(preview.outputs).toEqual([
      expect.objectContaining({ kind: 'reading', value: 12.4, sampleId: null }),
      expect.objectContaining({ kind: 'reading', value: 61, specimenRole: 'control', controlLevel: '2', raw: qcSlip }),
      expect.objectContaining({ kind: 'reading', value: 11.8 }),
    ]);
    expect(preview.outputs[0]).not.toHaveProperty('specimenRole');
    // "QC LEVEL" without a level does not match the pattern (\s+ then \S+ need a level): not a control slip.
    expect(preview.outputs[2]).not.toHaveProperty('specimenRole');
    expect(preview.records.map((r) => r.control)).toEqual([null, { level: '2' }, null]);
    expect(preview.records[1].lines.map((l) => l.fields)).toEqual([['Control run'], ['Result'], ['Time'], []]);
  });

  it('a level is optional: a plain "control" line marks the slip without one', async () => {
    const plain = await profileDefinitionSchema.parseAsync({ ...reader, control: { pattern: '^CONTROL RUN$' } });
    const [, , third] = previewProfile(plain, capture).outputs;
    expect(third).toMatchObject({ specimenRole: 'control', value: 11.8 });
    expect(third).not.toHaveProperty('controlLevel');
  });

  it('the bridge on a byte stream gives what the server preview gives, for any split of the bytes', async () => {
    const parse = (chunks: ReadonlyArray<Buffer | string>) => runThrough<ParserOutput>(chunks, createParsingStages(profileDialect(reader), { idle: false }));
    const bytes = Buffer.from(capture);
    const whole = await parse([bytes]);
    expect(whole).toEqual(previewProfile(reader, capture).outputs);
    await fc.assert(
      fc.asyncProperty(fc.array(fc.nat({ max: bytes.length }), { maxLength: 8 }), async (cuts) => {
        expect(await parse(splitAt(bytes, cuts))).toEqual(whole);
      }),
      { numRuns: 50 },
    );
  });

  it('a control slip that cannot be read says it is a control slip, so nobody types it in for a patient', async () => {
    const [out] = previewProfile(reader, 'QC LEVEL 1\nCRP  ?? mg/L\n\f').outputs;
    expect(out).toEqual({ kind: 'unparsed', raw: 'QC LEVEL 1\nCRP  ?? mg/L\n\f', reason: 'control slip: no line matches "Result"' });
  });

  it('refuses a control pattern that captures anything but level, or uses lookaround, naming the field', async () => {
    expect(await loadProfile({ ...reader, control: { pattern: '^QC (?<sampleId>\\S+)' } })).toEqual({ ok: false, message: 'control.pattern: A control line may capture only (?<level>…), not "sampleId".' });
    expect(await loadProfile({ ...reader, control: { pattern: '^(?=QC)' } })).toEqual({ ok: false, message: expect.stringMatching(/^control\.pattern: Not a valid pattern: lookahead and lookbehind/) });
  });
});
