import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { ParserOutput } from '../../lib/validation/readings';
import { MllpCutter } from '../framing/mllp';
import type { RecordFrame } from '../framing/records';
import { createParsingStages } from '../parse-stage';
import { pinTimeZone } from '../testing/time-zone';
import { runThrough, splitAt } from '../testing/streams';
import { acknowledgment, acknowledgments, hl7v2, parseOru } from './hl7v2';
import { getDialect } from './index';

// Messages are built here from HL7 v2.5 segment definitions (chapters 2 and 7, field numbers from
// memory): a segment is its ID and fields joined by "|", so SEG-n is the n-th piece after the ID;
// in MSH, MSH-1 is the "|" itself and MSH-2 the encoding characters ^~\&.
// MLLP envelope (HL7 MLLP guide, from memory): 0x0B message 0x1C 0x0D, written out byte by byte here.

const seg = (...fields: string[]) => fields.join('|');
// MSH-3 sending application, MSH-4 facility, MSH-7 time, MSH-9 type, MSH-10 control ID, MSH-11 processing ID, MSH-12 version.
const MSH = (type = 'ORU^R01^ORU_R01', control = 'MSG00042') => seg('MSH', '^~\\&', 'HEMASIM', 'BENCH3', 'LIS', 'CLINIC', '20261201140500', '', type, control, 'P', '2.5');
// PID-3 patient identifier list (CX: ID^^^authority).
const PID = seg('PID', '1', '', 'PT-4711^^^CLINIC', '', 'Rex');
// OBR-2 placer order number, OBR-3 filler order number, OBR-4 service, OBR-7 observation time.
const OBR = seg('OBR', '1', 'PL-1', 'S-3001', 'CBC^Blood count', '', '', '20261201140000');
// OBX-2 type, -3 identifier, -5 value, -6 units (CE), -7 range, -8 flags, -11 status, -14 time, -18 equipment.
const OBX = (seq: number, type: string, id: string, value: string, units: string, flags = '', status = 'F', time = '20261201140322') =>
  seg('OBX', String(seq), type, id, '', value, units, '5.5-16.9', flags, '', '', status, '', '', time, '', '', '', 'SIM-0003');

const wrap = (segments: string[]) => Buffer.concat([Buffer.from([0x0b]), Buffer.from(`${segments.join('\r')}\r`), Buffer.from([0x1c, 0x0d])]);
const parse = (chunks: ReadonlyArray<Buffer | string>) => runThrough<ParserOutput>(chunks, createParsingStages(hl7v2, { idle: false }));
const frameOf = (segments: string[]): RecordFrame => {
  const [frame] = new MllpCutter().push(wrap(segments));
  if (frame.kind !== 'record') throw new Error('not a message');
  return frame;
};

pinTimeZone('Europe/Berlin');

describe('HL7 v2 dialect', () => {
  it('is registered by name', () => {
    expect(getDialect('hl7v2')).toBe(hl7v2);
  });

  it('SPM-11 specimen role "Q" (control specimen, HL7 v2.5 table 0369, from memory) marks the OBR group as QC', async () => {
    // SPM-1 set ID, SPM-2 specimen ID, SPM-4 specimen type, … SPM-11 specimen role; it follows the group's OBXs.
    const spm = seg('SPM', '1', 'QC-2', '', 'BLD', '', '', '', '', '', '', 'Q');
    const message = [MSH(), PID, OBR, OBX(1, 'NM', 'WBC^White cells', '12.4', '10*9/L'), spm, seg('OBR', '2', 'PL-2', 'S-3002'), OBX(1, 'NM', 'WBC^White cells', '8.1', '10*9/L')];
    const out = await parse([wrap(message)]);
    expect(out).toEqual([
      expect.objectContaining({ value: 12.4, specimenRole: 'control' }),
      expect.objectContaining({ value: 8.1, sampleId: 'S-3002', specimenRole: undefined }),
    ]);
  });

  it('maps PID, OBR and each OBX of an ORU^R01 to a reading', async () => {
    const message = [MSH(), PID, OBR, OBX(1, 'NM', 'WBC^White cells', '12.4', '10*9/L^^UCUM', 'N'), OBX(2, 'SN', 'PLT^Platelets', '<^50', '10*9/L', 'L~A')];
    expect(await parse([wrap(message)])).toEqual([
      {
        kind: 'reading',
        analyte: 'WBC',
        value: 12.4,
        // OBX-5 printed "12.4": one decimal, kept as the precision it was sent with.
        decimals: 1,
        comparator: null,
        unit: '10*9/L',
        flags: ['N'],
        sampleId: 'S-3001',
        patientRef: 'PT-4711',
        measuredAt: '2026-12-01T14:03:22+01:00',
        instrumentSerial: 'SIM-0003',
        // OBX-7 as sent; OBX-11 "F" is a final result (HL7 table 0085, from memory).
        code: null,
        text: null,
        notes: [],
        referenceRange: '5.5-16.9',
        resultStatus: 'final',
        raw: `${MSH()}\r${PID}\r${OBR}\r${message[3]}\r`,
      },
      expect.objectContaining({ analyte: 'PLT', value: 50, comparator: '<', flags: ['L', 'A'] }),
    ]);
  });

  // HL7 v2 TS with an offset is that moment; without one it is the lab PC's local time. OBR-2 when OBR-3 is empty.
  it('reads observation times with offsets and falls back to the placer number', async () => {
    const obr = seg('OBR', '1', 'PL-9', '', 'CBC');
    const [out] = await parse([wrap([MSH(), obr, OBX(1, 'NM', 'HCT', '45', '%', '', 'C', '20261201140322+0000')])]);
    expect(out).toMatchObject({ sampleId: 'PL-9', measuredAt: '2026-12-01T14:03:22+00:00', flags: ['corrected'] });
  });

  // HL7 v2 escape sequences (chapter 2): \F\ \S\ \T\ \R\ \E\ stand for the separators.
  it('undoes escape sequences', async () => {
    const [out] = await parse([wrap([MSH(), seg('OBR', '1', '', 'S\\F\\7'), OBX(1, 'NM', 'A\\S\\B', '1', 'U\\T\\L')])]);
    expect(out).toMatchObject({ analyte: 'A^B', sampleId: 'S|7', unit: 'U&L' });
  });

  it('keeps what it cannot read as unparsed, saying why', async () => {
    const out = await parse([wrap([MSH(), OBR, OBX(1, 'NM', 'MORPH', 'clumped', ''), OBX(2, 'NM', 'RBC', '', '', '', 'X')]), wrap([MSH('ADT^A01')])]);
    expect(out.map((o) => (o.kind === 'unparsed' ? o.reason : o.kind))).toEqual([
      'OBX 1 MORPH: OBX-5 should be a number (NM): "clumped" is not a number',
      'OBX 2 RBC: the result could not be obtained (OBX-11 X)',
      'not a result message: MSH-9 is ADT^A01 (Benchwire reads ORU^R01)',
    ]);
  });

  // HL7 v2 chapter 2 acknowledgment: MSA-1 AA/AE/AR, MSA-2 = the message's MSH-10; ACK's MSH-5/6 are the sender's MSH-3/4,
  // and its MSH-3/4 the receiving application as the sender addressed it in MSH-5/6 (none configured here).
  it('acknowledges with AA, AE or AR and echoes MSH-10 in MSA-2', () => {
    const context = { now: new Date(2026, 11, 1, 14, 5, 0), sequence: 7 };
    const good = frameOf([MSH(), OBR, OBX(1, 'NM', 'WBC', '12.4', '10*9/L')]);
    const [msh, msa] = acknowledgment(good, parseOru(good), context).split('\r');
    expect(msh.split('|')).toEqual(['MSH', '^~\\&', 'LIS', 'CLINIC', 'HEMASIM', 'BENCH3', '20261201140500', '', 'ACK^R01^ACK', 'BW202612011405000007', 'P', '2.5']);
    expect(msa.split('|')).toEqual(['MSA', 'AA', 'MSG00042', '']);

    // AE only when a should-be-numeric observation cannot be read; a text observation (ST) is read as text: AA.
    const partly = frameOf([MSH('ORU^R01', 'M2'), OBX(1, 'NM', 'WBC', '12,4', ''), OBX(2, 'ST', 'MORPH', 'clumped', '')]);
    expect(acknowledgment(partly, parseOru(partly), context).split('\r')[1]).toMatch(/^MSA\|AE\|M2\|1 numeric result\(s\) not read/);
    const text = frameOf([MSH('ORU^R01', 'M4'), OBX(1, 'ST', 'MORPH', 'clumped', '')]);
    expect(acknowledgment(text, parseOru(text), context).split('\r')[1]).toBe('MSA|AA|M4|');
    const other = frameOf([MSH('ADT^A01', 'M3')]);
    expect(acknowledgment(other, parseOru(other), context).split('\r')[1]).toBe('MSA|AR|M3|unsupported message type ADT\\S\\A01; kept for review');
    // (the ^ in MSA-3's text is escaped as \S\, HL7 v2 chapter 2)
  });

  it('answers each message through the back channel, in its MLLP envelope', async () => {
    const sent: Buffer[] = [];
    await runThrough([wrap([MSH(), OBR, OBX(1, 'NM', 'WBC', '12.4', '')])], createParsingStages(hl7v2, { idle: false, reply: (b) => sent.push(b) }));
    expect(sent).toHaveLength(1);
    expect([sent[0][0], sent[0].at(-2), sent[0].at(-1)]).toEqual([0x0b, 0x1c, 0x0d]);
    expect(sent[0].toString().split('\r')[1]).toBe('MSA|AA|MSG00042|');
  });

  it('keeps bytes outside envelopes and a message broken off by a new VT', async () => {
    const broken = Buffer.concat([Buffer.from([0x0b]), Buffer.from(`${MSH()}\rOBX|1`)]);
    const out = await parse([Buffer.from('garbage\r\n'), broken, wrap([MSH(), OBX(1, 'NM', 'WBC', '3', '')])]);
    expect(out.map((o) => (o.kind === 'unparsed' ? [o.reason, o.raw] : o.kind))).toEqual([
      ['bytes outside an MLLP message (VT … FS CR)', 'garbage\r\n'],
      ['message cut short: a new message (VT) began before FS', `${MSH()}\rOBX|1`],
      'reading',
    ]);
  });

  it('gives the same outputs for any split, and random bytes never stop a later message', async () => {
    const stream = Buffer.concat([wrap([MSH(), PID, OBR, OBX(1, 'NM', 'WBC', '12.4', 'x')]), Buffer.from('\x00zz'), wrap([MSH(), OBX(1, 'NM', 'RBC', '7', 'y')])]);
    const whole = await parse([stream]);
    await fc.assert(
      fc.asyncProperty(fc.array(fc.nat({ max: stream.length }), { maxLength: 12 }), async (cuts) => {
        expect(await parse(splitAt(stream, cuts))).toEqual(whole);
      }),
      { numRuns: 100 },
    );
    const good = wrap([MSH(), OBX(1, 'NM', 'RBC', '7', 'y')]);
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 300 }), async (noise) => {
        const out = await parse([Buffer.from(noise), Buffer.from([0x1c, 0x0d]), good]);
        expect(out.at(-1)).toMatchObject({ kind: 'reading', analyte: 'RBC', value: 7 });
      }),
      { numRuns: 150 },
    );
  });

  // MSH with more fields: MSH-15 accept acknowledgment type, MSH-16 application acknowledgment type, MSH-18 character set.
  const MSHx = (fields: Record<number, string>, time = '20261201140500') => {
    const parts = ['MSH', '^~\\&', 'HEMASIM', 'BENCH3', 'LIS', 'CLINIC', time, '', 'ORU^R01^ORU_R01', 'MSG00042', 'P', '2.5'];
    for (const [n, v] of Object.entries(fields)) {
      while (parts.length < Number(n)) parts.push('');
      parts[Number(n) - 1] = v;
    }
    return parts.join('|');
  };

  // OBX-2 value type (HL7 table 0125, from memory): CE/CWE coded (identifier ^ text ^ coding system),
  // ST/TX/FT text. A coded or text observation is never read as a number. NTE-3 comments follow their OBX.
  it('keeps coded and text observations as codes and text, with their notes', async () => {
    const NTE = seg('NTE', '1', 'L', 'Confirm with a second test');
    const out = await parse([
      wrap([MSH(), OBR, OBX(1, 'CE', 'FELV^FeLV antigen', '1^Positive^L', '', 'A'), NTE, OBX(2, 'CWE', 'FIV', 'NEG^Negative^99LOC', ''), OBX(3, 'ST', 'MORPH', 'Clumped platelets', ''), OBX(4, 'FT', 'COMMENT', 'Line one\\.br\\Line two', '')]),
    ]);
    expect(out[0]).toMatchObject({ kind: 'reading', analyte: 'FELV', value: null, code: { code: '1', display: 'Positive', system: 'L' }, flags: ['A'], notes: ['Confirm with a second test'] });
    expect(out[1]).toMatchObject({ kind: 'reading', value: null, code: { code: 'NEG', display: 'Negative', system: '99LOC' } });
    expect(out[2]).toMatchObject({ kind: 'reading', value: null, code: null, text: 'Clumped platelets' });
    expect(out[3]).toMatchObject({ kind: 'reading', text: 'Line one\nLine two' });
  });

  // HL7 v2 chapter 2 batch protocol (from memory): [FHS] BHS { MSH … } BTS [FTS]; every message in it is read,
  // and the batch is answered with a batch of acknowledgments.
  it('reads every message of a batch and answers each', async () => {
    const batch = [seg('FHS', '^~\\&', 'HEMASIM'), seg('BHS', '^~\\&', 'HEMASIM', 'BENCH3'), MSH('ORU^R01', 'B1'), OBX(1, 'NM', 'WBC', '12.4', ''), MSH('ORU^R01', 'B2'), OBX(1, 'NM', 'RBC', '7.1', ''), seg('BTS', '2'), seg('FTS', '1')];
    const sent: Buffer[] = [];
    const out = await runThrough<ParserOutput>([wrap(batch)], createParsingStages(hl7v2, { idle: false, reply: (b) => sent.push(b) }));
    expect(out.map((o) => (o.kind === 'reading' ? `${o.analyte}=${o.value}` : o.reason))).toEqual(['WBC=12.4', 'RBC=7.1']);
    const reply = sent[0].toString('latin1');
    expect(reply.match(/MSA\|AA\|B\d/g)).toEqual(['MSA|AA|B1', 'MSA|AA|B2']);
    expect(reply).toMatch(/^\x0bBHS\|/);
    expect(reply).toMatch(/BTS\|2\r\x1c\r$/);
  });

  // MSH-18 character set (HL7 table 0211, from memory): 8859/1 is ISO 8859-1, where byte 0xB5 is µ
  // (ISO/IEC 8859-1 code table). The instrument's chosen encoding overrides what the message says.
  it('decodes each message as its MSH-18 says, unless the instrument setting overrides it', async () => {
    const bytes = Buffer.concat([
      Buffer.from([0x0b]),
      Buffer.from(`${MSHx({ 18: '8859/1' })}\r${seg('OBX', '1', 'NM', 'CRP', '', '3.2', 'mg/dL')}`, 'latin1'),
      Buffer.from([0xb5]),
      Buffer.from('x\r', 'latin1'),
      Buffer.from([0x1c, 0x0d]),
    ]);
    // A made-up unit "mg/dLµx" only to carry the byte.
    const followed = await parse([bytes]);
    expect(followed[0]).toMatchObject({ kind: 'reading', unit: 'mg/dLµx' });
    const overridden = await runThrough<ParserOutput>([bytes], createParsingStages(hl7v2, { idle: false, encoding: 'utf8' }));
    expect(overridden[0]).toMatchObject({ kind: 'reading', unit: 'mg/dL\ufffdx' });
  });

  // SPM-2 specimen ID (v2.5 chapter 7, EIP: placer ^ filler assigned identifier); the SPM of an order follows its OBX group.
  it('takes SPM-2 as the specimen ID when present', async () => {
    const SPM = seg('SPM', '1', 'SP-77^SP-77F', '', 'BLD');
    const out = await parse([wrap([MSH(), PID, OBR, OBX(1, 'NM', 'WBC', '12.4', ''), SPM])]);
    expect(out[0]).toMatchObject({ kind: 'reading', sampleId: 'SP-77' });
  });

  // DTM (HL7 v2.5 chapter 2A): YYYY[MM[DD[HH[MM[SS[.S[S[S[S]]]]]]]]][+/-ZZZZ]; fractional seconds are part of the
  // value; a time without an offset is in the sender's offset, which MSH-7 gives (from memory, verify).
  it('keeps fractional seconds and takes MSH-7\'s offset for a time without one', async () => {
    const out = await parse([wrap([MSHx({}, '20261201140500-0500'), OBX(1, 'NM', 'WBC', '12.4', '', '', 'F', '20261201140322.1234')])]);
    expect(out[0]).toMatchObject({ kind: 'reading', measuredAt: '2026-12-01T14:03:22.1234-05:00' });
    const local = await parse([wrap([MSH(), OBX(1, 'NM', 'WBC', '12.4', '', '', 'F', '20261201140322.5')])]);
    expect(local[0]).toMatchObject({ kind: 'reading', measuredAt: '2026-12-01T14:03:22.5+01:00' });
  });

  it('says why it keeps an NM observation with repetitions for review instead of keeping only the first', async () => {
    const out = await parse([wrap([MSH(), OBX(1, 'NM', 'WBC', '12.4~12.6', '')])]);
    expect(out[0].kind === 'unparsed' && out[0].reason).toMatch(/OBX-5 holds 2 repetitions of a number/);
  });

  // Enhanced acknowledgment mode (HL7 v2 chapter 2, MSH-15/16 with table 0155 AL/NE/ER/SU, from memory):
  // an accept ACK (CA/CE/CR) as MSH-15 asks, then an application ACK (AA/AE/AR) only as MSH-16 asks.
  it('answers in enhanced mode as MSH-15/16 ask, naming itself as configured', () => {
    const context = { now: new Date(2026, 11, 1, 14, 5, 0), sequence: 1, application: 'BW-LAB', facility: 'Clinic Lab' };
    const codes = (fields: Record<number, string>, value = '12.4') => {
      const frame = frameOf([MSHx(fields), OBX(1, 'NM', 'WBC', value, '')]);
      return acknowledgments(frame, parseOru(frame), context).map((ack) => ack.split('\r')[1].split('|')[1]);
    };
    expect(codes({ 15: 'AL', 16: 'NE' })).toEqual(['CA']);
    expect(codes({ 15: 'AL', 16: 'AL' })).toEqual(['CA', 'AA']);
    expect(codes({ 15: 'NE', 16: 'ER' })).toEqual([]);
    expect(codes({ 15: 'NE', 16: 'ER' }, 'x')).toEqual(['AE']);
    expect(codes({})).toEqual(['AA']);
    const frame = frameOf([MSHx({}), OBX(1, 'NM', 'WBC', '1', '')]);
    const msh = acknowledgment(frame, parseOru(frame), context).split('\r')[0].split('|');
    expect(msh.slice(2, 6)).toEqual(['BW-LAB', 'Clinic Lab', 'HEMASIM', 'BENCH3']);
  });
});
