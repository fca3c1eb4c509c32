import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { ParserOutput } from '../../lib/validation/readings';
import { createParsingStages } from '../parse-stage';
import { C, named, testFrame, testSession } from '../testing/astm';
import { pinTimeZone } from '../testing/time-zone';
import { runThrough, splitAt } from '../testing/streams';
import { astmE1394, delimitersOf, unescape } from './astm-e1394';
import { getDialect } from './index';

// Messages are built here from ASTM E1394 / CLSI LIS2-A2 record definitions (field numbers from
// memory): field 1 is the record type, so a record is its fields joined by the field delimiter.
// The link bytes come from bridge/testing/astm.ts (E1381 frames with independently summed checksums).

const record = (fields: string[]) => fields.join('|');
// H.1 type, H.2 delimiters (repeat \ component ^ escape &), H.5 sender name^version^serial, H.12 processing ID, H.13 version, H.14 time.
const H = record(['H', '\\^&', '', '', 'CHEMSIM^1.0^SIM-0002', '', '', '', '', '', '', 'P', 'LIS2-A2', '20261201140500']);
// P.2 sequence, P.3 practice-assigned patient ID.
const P = record(['P', '1', 'PT-4711']);
// O.2 sequence, O.3 specimen ID, O.4 instrument specimen ID, O.5 universal test ID.
const O = record(['O', '1', 'S-2001', '77', '^^^GLU\\^^^CREA']);
// R.2 seq, R.3 ^^^local code, R.4 value, R.5 units, R.6 range, R.7 flags, R.8 nature, R.9 status,
// R.10 date of change, R.11 operator, R.12 started, R.13 completed, R.14 instrument.
const R = (seq: number, code: string, value: string, units: string, flags = '', status = 'F', completed = '20261201140322') =>
  record(['R', String(seq), `^^^${code}`, value, units, '3.9 to 6.1', flags, '', status, '', 'OP1', '20261201140010', completed, '']);
const L = record(['L', '1', 'N']);

const parse = (chunks: ReadonlyArray<Buffer | string>) => runThrough<ParserOutput>(chunks, createParsingStages(astmE1394, { idle: false }));

pinTimeZone('Europe/Berlin');

describe('ASTM E1394 dialect', () => {
  it('is registered by name', () => {
    expect(getDialect('astm-e1394')).toBe(astmE1394);
  });

  it('O.12 action code "Q" (treat the specimen as quality control; E1394 order record, from memory) marks a control', async () => {
    // O.6 priority … O.11 collector ID left empty, O.12 action code.
    const control = record(['O', '1', 'QC-L1', '', '^^^GLU', '', '', '', '', '', '', 'Q']);
    const out = await parse([testSession([H, P, control, R(1, 'GLU', '5.2', 'mmol/L', 'N'), L])]);
    expect(out).toEqual([expect.objectContaining({ analyte: 'GLU', sampleId: 'QC-L1', specimenRole: 'control' })]);
    const added = record(['O', '1', 'S-1', '', '^^^GLU', '', '', '', '', '', '', 'A']);
    const patient = await parse([testSession([H, P, added, R(1, 'GLU', '5.2', 'mmol/L', 'N'), L])]);
    expect(patient).toEqual([expect.objectContaining({ specimenRole: undefined })]);
  });

  it('maps P, O and each R record of one message to its own reading', async () => {
    const out = await parse([testSession([H, P, O, R(1, 'GLU', '5.2', 'mmol/L', 'N'), R(2, 'CREA', '<18', 'umol/L', 'L'), L])]);
    expect(out).toEqual([
      {
        kind: 'reading',
        analyte: 'GLU',
        value: 5.2,
        // R.4 printed "5.2": one decimal, kept so the value shows as the analyzer printed it.
        decimals: 1,
        comparator: null,
        unit: 'mmol/L',
        flags: ['N'],
        sampleId: 'S-2001',
        patientRef: 'PT-4711',
        // R.13 is the lab PC's local time (Europe/Berlin, UTC+1 in December).
        measuredAt: '2026-12-01T14:03:22+01:00',
        instrumentSerial: 'SIM-0002',
        // R.6 as sent; R.9 "F" is a final result (LIS2-A2, from memory).
        code: null,
        text: null,
        notes: [],
        referenceRange: '3.9 to 6.1',
        resultStatus: 'final',
        raw: `${H}\r${P}\r${O}\r${R(1, 'GLU', '5.2', 'mmol/L', 'N')}\r${L}\r`,
      },
      expect.objectContaining({ analyte: 'CREA', value: 18, decimals: 0, comparator: '<', unit: 'umol/L', flags: ['L'], sampleId: 'S-2001' }),
    ]);
  });

  // LIS2-A2 delimiters are whatever the H record defines; escapes &F& &S& &R& &E& stand for them.
  it('takes the delimiters from the H record and undoes escape sequences', async () => {
    const h = 'H!@#$!!!SIM#x#SN$F$1';
    expect(delimitersOf(h)).toEqual({ field: '!', repeat: '@', component: '#', escape: '$' });
    expect(unescape('a$F$b$S$c$R$d$E$e$X41$', { field: '!', repeat: '@', component: '#', escape: '$' })).toBe('a!b#c@d$eA');
    const r = ['R', '1', '###ALT', '43', 'U$S$L', '', 'H@A', '', 'F'].join('!');
    const [out] = await parse([testSession([h, ['O', '1', 'S$F$9'].join('!'), r, 'L!1!N'])]);
    expect(out).toMatchObject({ analyte: 'ALT', value: 43, unit: 'U#L', flags: ['H', 'A'], sampleId: 'S!9', instrumentSerial: 'SN!1' });
  });

  // LIS2-A2 R.9 result status: P preliminary, C correction, X cannot be done (from memory).
  it('carries the result status as a flag and keeps a test that could not be done as unparsed', async () => {
    const out = await parse([testSession([H, O, R(1, 'GLU', '5.2', 'mmol/L', '', 'P'), R(2, 'ALB', '', 'g/L', '', 'X'), R(3, 'TP', 'high', 'g/L'), L])]);
    expect(out[0]).toMatchObject({ analyte: 'GLU', flags: ['preliminary'] });
    expect(out[1]).toMatchObject({ kind: 'unparsed', reason: 'R 2: ALB: the instrument could not do the test (R.9 status X)' });
    // A word in R.4 is a qualitative result, kept as the instrument's own code, never as a number.
    expect(out[2]).toMatchObject({ kind: 'reading', analyte: 'TP', value: null, code: { system: null, code: 'high', display: null } });
  });

  it('keeps a message cut short by EOT as one fragment with its records', async () => {
    const session = Buffer.concat([Buffer.from([C.ENQ]), testFrame(1, `${H}\r`), testFrame(2, `${R(1, 'GLU', '5.2', 'mmol/L')}\r`), Buffer.from([C.EOT])]);
    expect(await parse([session])).toEqual([
      { kind: 'unparsed', raw: `${H}\r${R(1, 'GLU', '5.2', 'mmol/L')}\r`, reason: 'message cut short: session ended before its L record' },
    ]);
  });

  it('says so when a message holds no results, and when the time is impossible', async () => {
    const out = await parse([testSession([H, P, L]), testSession([H, R(1, 'GLU', '5.2', 'mmol/L', '', 'F', '20261301140322'), L])]);
    expect(out.map((o) => (o.kind === 'unparsed' ? o.reason : o.kind))).toEqual([
      'message holds no results (no R record)',
      'R 1: GLU: R.13 completion time "20261301140322" is not a real date',
    ]);
  });

  // LIS2-A2 L.3 termination code I: no information available from the last query (from memory).
  it('answers a host query with "no information" after the instrument\'s EOT', async () => {
    const sent: number[] = [];
    const stages = createParsingStages(astmE1394, { idle: false, reply: (bytes) => sent.push(...bytes) });
    const query = record(['Q', '1', '^S-2001', '', 'ALL']);
    const out = await runThrough<ParserOutput>([testSession([H, query, L]), Buffer.from([C.ACK, C.ACK, C.ACK])], stages);
    expect(out).toEqual([expect.objectContaining({ kind: 'unparsed', reason: expect.stringMatching(/^host query/) })]);
    const said = named(sent);
    // ACK to ENQ and to each of three frames; then our ENQ, and on each ACK a frame, then EOT.
    // Our H.10 receiver ID is the instrument's H.5.
    expect(said.startsWith('<ACK><ACK><ACK><ACK><ENQ><STX>1H|\\^&|||Benchwire|||||CHEMSIM^1.0^SIM-0002||P|LIS2-A2|')).toBe(true);
    expect(said.endsWith(`${named(testFrame(2, 'L|1|I\r'))}<EOT>`)).toBe(true);
  });

  // Common practice, no source: the same bytes give the same readings however they are chunked.
  it('gives the same outputs for any split of the byte stream', async () => {
    const stream = Buffer.concat([
      testSession([H, P, O, R(1, 'GLU', '5.2', 'mmol/L'), R(2, 'BUN', '7,1', 'mmol/L'), L]),
      Buffer.from('\x00\xff junk'),
      testSession([H, O, R(1, 'ALP', '>1500', 'U/L', 'HH'), L]),
    ]);
    const whole = await parse([stream]);
    // "7,1" from an instrument set to a decimal point is kept unparsed (a comma is never guessed).
    expect(whole.map((o) => o.kind)).toEqual(['reading', 'unparsed', 'unparsed', 'reading']);
    await fc.assert(
      fc.asyncProperty(fc.array(fc.nat({ max: stream.length }), { maxLength: 12 }), async (cuts) => {
        expect(await parse(splitAt(stream, cuts))).toEqual(whole);
      }),
      { numRuns: 100 },
    );
  });

  it('never throws on random bytes, and a valid message after them is still read', async () => {
    const good = testSession([H, O, R(1, 'GLU', '5.2', 'mmol/L'), L]);
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 300 }), async (noise) => {
        const out = await parse([Buffer.from(noise), Buffer.from([C.EOT]), good]);
        expect(out.at(-1)).toMatchObject({ kind: 'reading', analyte: 'GLU', value: 5.2 });
        expect(out.every((o) => o.raw.length > 0)).toBe(true);
      }),
      { numRuns: 150 },
    );
  });

  // R.4 "data or measurement value" (E1394 §10.1.4 / LIS2-A2, from memory): the instrument's number as
  // it prints it. Whether it uses a decimal point or comma is the instrument's setting, not guessed.
  it('reads numbers in the instrument\'s own decimal mark and never a comma as a smaller number', async () => {
    const message = testSession([H, O, R(1, 'WBC', '12,500', '10*9/L'), R(2, 'GLU', '1.2E1', 'mmol/L'), R(3, 'ALT', '4.5e+2', 'U/L'), L]);
    const out = await parse([message]);
    expect(out[0]).toMatchObject({ kind: 'unparsed' });
    expect(out[0].kind === 'unparsed' && out[0].reason).toMatch(/^R 1: WBC: R\.4 "12,500" has a comma, but this instrument is set to a decimal point/);
    expect(out[1]).toMatchObject({ kind: 'reading', analyte: 'GLU', value: 12 });
    expect(out[2]).toMatchObject({ kind: 'reading', analyte: 'ALT', value: 450 });
    const comma = await runThrough<ParserOutput>([testSession([H, O, R(1, 'GLU', '5,2', 'mmol/L'), R(2, 'WBC', '12.500', '10*9/L'), L])], createParsingStages(astmE1394, { idle: false, decimalMark: 'comma' }));
    expect(comma[0]).toMatchObject({ kind: 'reading', value: 5.2 });
    expect(comma[1].kind === 'unparsed' && comma[1].reason).toMatch(/has a point, but this instrument is set to a decimal comma/);
  });

  // Qualitative results in R.4 (POS, NEG: common practice for in-clinic antigen tests, no source) are
  // kept as the instrument's own code with its flag (R.7, e.g. A abnormal), never as a number; the C
  // record that follows an R record comments on it (C.4 comment text, from memory).
  it('keeps a word result as a code and a comment record as the result\'s note', async () => {
    const C1 = record(['C', '1', 'I', 'Weak line^read again', 'G']);
    const out = await parse([testSession([H, O, R(1, 'FELV', 'POS', '', 'A'), C1, R(2, 'FIV', 'NEG', ''), L])]);
    expect(out[0]).toMatchObject({ kind: 'reading', analyte: 'FELV', value: null, code: { system: null, code: 'POS', display: null }, flags: ['A'], notes: ['Weak line read again'] });
    expect(out[1]).toMatchObject({ kind: 'reading', analyte: 'FIV', value: null, code: { code: 'NEG' }, notes: [] });
  });
});
