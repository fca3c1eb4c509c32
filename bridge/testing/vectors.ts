// Vectors written from the standards' text (clause or chapter named; "from memory" where it is), run
// both through `bridge parse` (a file: nobody to answer) and over a live TCP link (the bridge answers).
// Expected outputs are what the standard says a receiver must make of the bytes, not our own output.
// E1381 frames are built by bridge/testing/astm.ts (checksums summed there, byte by byte).
import { expect } from 'vitest';
import type { DecimalMark } from '../../lib/validation/numbers';
import { C, testFrame, testSession } from './astm';

export interface Vector {
  name: string;
  /** Where the expectation comes from. */
  source: string;
  dialect: 'astm-e1394' | 'hl7v2';
  decimalMark?: DecimalMark;
  bytes: Buffer;
  /** What a replay of the bytes from a file must give (ParserOutput objects, as asymmetric matchers). */
  replay: unknown[];
  /** What the same bytes must give over a two-way link, when that differs from a replay. */
  live?: unknown[];
  /** What the bridge must send back over a live link, control bytes by name (bridge/testing/astm.ts `named`). */
  answers?: (sent: string) => void;
}

const reading = (fields: Record<string, unknown>) => expect.objectContaining({ kind: 'reading', ...fields });
const unparsed = (reason: RegExp, raw?: unknown) => expect.objectContaining({ kind: 'unparsed', reason: expect.stringMatching(reason), ...(raw ? { raw } : {}) });

const H = 'H|\\^&|||SIM^1^SN-7';
const P = 'P|1||PT-9';
const O = 'O|1|S-1';
const L = 'L|1|N';
const enq = Buffer.from([C.ENQ]);
const eot = Buffer.from([C.EOT]);

/** Frames numbered as E1381 counts them (1..7, 0, …), one record each, some left out. */
function framesWithout(records: string[], missing: number[]): Buffer {
  return Buffer.concat([enq, ...records.flatMap((record, i) => (missing.includes(i + 1) ? [] : [testFrame((i + 1) % 8, `${record}\r`)])), eot]);
}

const seg = (...fields: string[]) => fields.join('|');
const mllp = (segments: string[], charset = 'latin1' as BufferEncoding) =>
  Buffer.concat([Buffer.from([0x0b]), Buffer.from(`${segments.join('\r')}\r`, charset), Buffer.from([0x1c, 0x0d])]);
// MSH-3/4 sending application/facility, MSH-5/6 receiving, MSH-7 time, MSH-9 type, MSH-10 control ID, MSH-11, MSH-12 version.
const msh = (control: string, time = '20261201140500', extra: string[] = []) =>
  seg('MSH', '^~\\&', 'HEMASIM', 'BENCH3', 'LIS', 'CLINIC', time, '', 'ORU^R01^ORU_R01', control, 'P', '2.5', ...extra);
// OBX-2 type, -3 identifier, -5 value, -6 units, -7 range, -8 flags, -11 status, -14 time.
const obx = (type: string, id: string, value: string, units = '', time = '') => seg('OBX', '1', type, id, '', value, units, '', '', '', '', 'F', '', '', time);

/** The MSA-1 codes and MSH-5/6 of every HL7 ACK the bridge sent (a batch of ACKs counts each message). */
export function hl7Answers(sent: string): { codes: string[]; receivers: string[] } {
  const segments = sent.split(/[\x0b\x1c\r]/).filter(Boolean);
  return {
    codes: segments.filter((s) => s.startsWith('MSA|')).map((s) => s.split('|')[1]),
    receivers: segments.filter((s) => s.startsWith('MSH|')).map((s) => s.split('|').slice(4, 6).join('^')),
  };
}

export const VECTORS: Vector[] = [
  {
    name: 'ASTM numbers: a grouping comma, exponent notation, a word result',
    source: 'E1394 R.4 value (from memory); the instrument is set to a decimal point, so "12,500" is not 12.5',
    dialect: 'astm-e1394',
    bytes: testSession([H, O, 'R|1|^^^WBC|12,500|10*9/L', 'R|2|^^^GLU|1.2E1|mmol/L', 'R|3|^^^FELV|POS|||A', L]),
    replay: [
      unparsed(/"12,500" has a comma, but this instrument is set to a decimal point/),
      reading({ analyte: 'GLU', value: 12 }),
      reading({ analyte: 'FELV', value: null, code: { system: null, code: 'POS', display: null }, flags: ['A'] }),
    ],
    // E1381 establishment and transfer: ENQ → ACK, each good frame → ACK (from memory).
    answers: (sent) => expect(sent).toBe('<ACK>'.repeat(7)),
  },
  {
    name: 'ASTM decimal comma instrument',
    source: 'the instrument setting (Admin → Instruments) says decimal comma: "5,2" is 5.2',
    dialect: 'astm-e1394',
    decimalMark: 'comma',
    bytes: testSession([H, O, 'R|1|^^^GLU|5,2|mmol/L', L]),
    replay: [reading({ analyte: 'GLU', value: 5.2 })],
  },
  {
    name: 'E1381 frame-number gap',
    // E1381/LIS1-A receiver requirements (from memory): a frame whose number is neither the last accepted
    // one nor one higher modulo 8 is rejected. Here frame 4 (the first R record) never arrives.
    source: 'E1381 frame number rule (from memory)',
    dialect: 'astm-e1394',
    bytes: framesWithout([H, P, O, 'R|1|^^^ALB|10|g/L', 'R|2|^^^GLU|5.2|mmol/L', L], [4]),
    // A file cannot be asked again: the missing span is named, and the message (H P O, then R|2 and L) is
    // kept as one fragment with its bytes; R|2 is not read, since the missing frame might have held a new P or O.
    replay: [unparsed(/frame numbers jump from 3 to 5: frame 4 missing/, `${H}\r${P}\r${O}\rR|2|^^^GLU|5.2|mmol/L\r${L}\r`)],
    // Live: each out-of-sequence frame is NAKed (the sender should repeat frame 4); this one never does, so
    // its session ends with the refused frames' text kept, unread.
    live: [unparsed(/without frame 4/, `${H}\r${P}\r${O}\rR|2|^^^GLU|5.2|mmol/L\r${L}\r`)],
    answers: (sent) => expect(sent).toBe('<ACK><ACK><ACK><ACK><NAK><NAK>'),
  },
  {
    name: 'E1381 frame-number gap across the 7 → 0 wrap',
    source: 'E1381 frame numbers count 1..7 then 0 (from memory); frames 7 and 0 missing',
    dialect: 'astm-e1394',
    bytes: framesWithout([H, P, O, 'R|1|^^^NA|145|mmol/L', 'R|2|^^^K|4.1|mmol/L', 'R|3|^^^CL|110|mmol/L', 'R|4|^^^CA|2.4|mmol/L', 'R|5|^^^P|1.2|mmol/L', 'R|6|^^^MG|0.9|mmol/L', L], [7, 8]),
    replay: [unparsed(/frame numbers jump from 6 to 1: frames 7, 0 missing/)],
    live: [unparsed(/without frame 7/)],
  },
  {
    name: 'E1381 frame before ENQ',
    // The receiver leaves the neutral state only on ENQ (E1381/LIS1-A data link state diagram, from memory):
    // frames without ENQ get no ACK and no NAK and are not read; their bytes are kept as a fragment. The
    // session that follows with ENQ is read as usual.
    source: 'E1381 establishment phase and state diagram (from memory)',
    dialect: 'astm-e1394',
    bytes: Buffer.concat([testFrame(1, `${H}\r`), testFrame(2, `${O}\r`), testFrame(3, 'R|1|^^^GLU|9.9|mmol/L\r'), testFrame(4, `${L}\r`), eot, testSession([H, O, 'R|1|^^^GLU|5.2|mmol/L', L])]),
    replay: [
      unparsed(/frame sent without ENQ first, not accepted/, expect.stringContaining('R|1|^^^GLU|9.9|mmol/L')),
      reading({ analyte: 'GLU', value: 5.2 }),
    ],
    // Only the real session is answered: ENQ and its four frames.
    answers: (sent) => expect(sent).toBe('<ACK>'.repeat(5)),
  },
  {
    name: 'E1381 damaged frame, then its repeat',
    source: 'E1381: a wrong checksum is rejected (NAK) and the sender repeats the frame with the same number (from memory)',
    dialect: 'astm-e1394',
    bytes: Buffer.concat([enq, testFrame(1, `${H}\r`), testFrame(2, `${O}\r`), testFrame(3, 'R|1|^^^GLU|5.2|mmol/L\r', { checksum: '00' }), testFrame(3, 'R|1|^^^GLU|5.2|mmol/L\r'), testFrame(4, `${L}\r`), eot]),
    replay: [reading({ analyte: 'GLU', value: 5.2 })],
    answers: (sent) => expect(sent).toBe('<ACK><ACK><ACK><NAK><ACK><ACK>'),
  },
  {
    name: 'E1381 repeat of the last accepted frame',
    source: 'E1381: a frame with the last accepted number is a repeat (our ACK was lost): ACKed, kept once (from memory)',
    dialect: 'astm-e1394',
    bytes: Buffer.concat([enq, testFrame(1, `${H}\r`), testFrame(2, `${O}\r`), testFrame(3, 'R|1|^^^GLU|5.2|mmol/L\r'), testFrame(3, 'R|1|^^^GLU|5.2|mmol/L\r'), testFrame(4, `${L}\r`), eot]),
    replay: [reading({ analyte: 'GLU', value: 5.2 })],
    answers: (sent) => expect(sent).toBe('<ACK>'.repeat(6)),
  },
  {
    name: 'HL7 batch, CE observation, 8859/1 character set',
    source: 'HL7 v2 chapter 2 batch protocol (FHS/BHS … BTS/FTS); MSH-18 table 0211 (0xB5 is µ in ISO 8859-1); CE in OBX-5 (from memory)',
    dialect: 'hl7v2',
    bytes: Buffer.concat([
      Buffer.from([0x0b]),
      Buffer.from('FHS|^~\\&|A\rBHS|^~\\&|A\rMSH|^~\\&|A|B|||20261201140500||ORU^R01|M1|P|2.5||||||8859/1\rOBX|1|CE|FELV||1^Positive^L||||A\rMSH|^~\\&|A|B|||20261201140500||ORU^R01|M2|P|2.5||||||8859/1\rOBX|1|NM|CRP||3.2|', 'latin1'),
      Buffer.from([0xb5]),
      Buffer.from('g/mL\rBTS|2\rFTS|1\r', 'latin1'),
      Buffer.from([0x1c, 0x0d]),
    ]),
    replay: [
      reading({ analyte: 'FELV', value: null, code: { code: '1', display: 'Positive', system: 'L' } }),
      reading({ analyte: 'CRP', value: 3.2, unit: 'µg/mL' }),
    ],
    // One acknowledgment per message of the batch, each AA (HL7 v2 batch protocol, from memory).
    answers: (sent) => expect(hl7Answers(sent).codes).toEqual(['AA', 'AA']),
  },
  {
    name: 'HL7 SPM-2, fractional seconds, MSH-7 offset',
    source: 'HL7 v2.5 chapter 7 SPM-2 specimen ID (EIP placer^filler); chapter 2A DTM with fractional seconds; a time without offset takes MSH-7\'s (from memory)',
    dialect: 'hl7v2',
    bytes: mllp([msh('M7', '20261201140500-0500'), seg('OBR', '1', 'PL-1', 'S-3001', 'CBC'), obx('NM', 'WBC', '12.4', '10*9/L', '20261201140322.25'), seg('SPM', '1', 'SP-77^SP-77F', '', 'BLD')]),
    replay: [reading({ analyte: 'WBC', value: 12.4, sampleId: 'SP-77', measuredAt: '2026-12-01T14:03:22.25-05:00' })],
    // Original mode: one ACK, AA; MSH-5/6 of the ACK are the sender's MSH-3/4 (chapter 2, from memory).
    answers: (sent) => expect(hl7Answers(sent)).toEqual({ codes: ['AA'], receivers: ['HEMASIM^BENCH3'] }),
  },
  {
    name: 'HL7 enhanced mode, a text observation',
    source: 'HL7 v2 chapter 2 MSH-15/16 (table 0155: AL always, NE never); an ST observation is no number and draws no AE (from memory)',
    dialect: 'hl7v2',
    bytes: mllp([msh('M8', '20261201140500', ['', '', 'AL', 'NE']), obx('ST', 'MORPH', 'Target cells seen')]),
    replay: [reading({ analyte: 'MORPH', value: null, text: 'Target cells seen' })],
    // An accept acknowledgment CA and no application acknowledgment (MSH-16 NE).
    answers: (sent) => expect(hl7Answers(sent).codes).toEqual(['CA']),
  },
  {
    name: 'HL7 NM with repetitions',
    source: 'HL7 v2 chapter 2: OBX-5 may repeat; an NM result is one number, so the message says why it is kept for review (from memory)',
    dialect: 'hl7v2',
    bytes: mllp([msh('M9'), obx('NM', 'WBC', '12.4~12.6', '10*9/L')]),
    replay: [unparsed(/OBX-5 holds 2 repetitions of a number/)],
    // AE only because a numeric observation could not be read.
    answers: (sent) => expect(hl7Answers(sent).codes).toEqual(['AE']),
  },
];
