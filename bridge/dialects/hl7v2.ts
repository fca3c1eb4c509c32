import { parsedReadingSchema, type ParserOutput } from '../../lib/validation/readings';
import type { Line } from '../framing/lines';
import { MLLP_CONTROL_BYTES, MllpFramer, mllpWrap } from '../framing/mllp';
import { rawOf, type RecordFrame } from '../framing/records';
import { fragment } from '../fragments';
import { compactStamp, compactTimestamp } from '../local-time';
import type { AnswerContext, Dialect } from './dialect';

// HL7 v2.x ORU^R01 (observation result), from our reading of HL7 v2 chapters 2 and 7 (from memory).
// MSH-1 is the field separator itself and MSH-2 the encoding characters (component, repetition,
// escape, subcomponent; usually ^~\&), so MSH-n is the n-th piece of MSH split on the separator;
// in every other segment SEG-n is the piece after n separators.
//   PID-3 patient identifier list (PID-2 as fallback) → patientRef
//   OBR-3 filler order number, else OBR-2 placer order number → sampleId; OBR-7 observation time
//   SPM-11 specimen role (v2.5 table 0369): "Q" = control specimen; the SPM of an OBR's group may follow its OBXs
//   OBX-2 value type, OBX-3 observation identifier, OBX-5 value, OBX-6 units (CE/CWE identifier),
//   OBX-7 reference range, OBX-8 abnormal flags, OBX-11 result status, OBX-14 observation time,
//   OBX-18 equipment instance identifier → instrumentSerial
// Each message is answered with an ACK: MSA-1 AA (accepted), AE (error: kept for review) or AR
// (rejected: not a result message), MSA-2 = the message's MSH-10.

export interface Encoding {
  field: string;
  component: string;
  repetition: string;
  escape: string;
  subcomponent: string;
}

export const DEFAULT_ENCODING: Encoding = { field: '|', component: '^', repetition: '~', escape: '\\', subcomponent: '&' };

export function encodingOf(msh: string): Encoding | string {
  if (!msh.startsWith('MSH') || msh.length < 8) return 'the message does not start with an MSH segment';
  const [field, component, repetition, escape, subcomponent] = msh.slice(3, 8);
  const chars = [field, component, repetition, escape];
  if (new Set(chars).size !== 4 || /[A-Za-z0-9\s]/.test(chars.join(''))) return 'MSH-1/MSH-2 do not define the separators';
  // MSH-2 may leave out the subcomponent separator (then the next character is the field separator).
  return { field, component, repetition, escape, subcomponent: subcomponent === field ? '&' : subcomponent };
}

/** Undo HL7 escapes: \F\ \S\ \T\ \R\ \E\ (separators), \Xhh…\ (hex), \.br\ (line break). */
export function unescapeHl7(text: string, e: Encoding): string {
  if (!text.includes(e.escape)) return text;
  const esc = e.escape.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
  return text.replace(new RegExp(`${esc}(F|S|T|R|E|X(?:[0-9A-Fa-f]{2})+|\\.br)${esc}`, 'g'), (_m, code: string) => {
    switch (code) {
      case 'F':
        return e.field;
      case 'S':
        return e.component;
      case 'T':
        return e.subcomponent;
      case 'R':
        return e.repetition;
      case 'E':
        return e.escape;
      case '.br':
        return '\n';
      default:
        return Buffer.from(code.slice(1), 'hex').toString('latin1');
    }
  });
}

export class Segment {
  readonly id: string;
  private readonly fields: string[];

  constructor(
    readonly line: Line,
    readonly encoding: Encoding,
  ) {
    const parts = line.text.split(encoding.field);
    this.id = parts[0];
    // MSH-1 is the separator itself: put it back so that fields[n] is SEG-n for every segment.
    this.fields = this.id === 'MSH' ? ['MSH', encoding.field, ...parts.slice(1)] : parts;
  }

  /** SEG-n as sent (still escaped). */
  raw(n: number): string {
    return this.fields[n] ?? '';
  }

  /** Component c of the first repetition of SEG-n, unescaped and trimmed. */
  get(n: number, c = 1): string {
    if (this.id === 'MSH' && n <= 2) return this.raw(n);
    const repetition = this.raw(n).split(this.encoding.repetition)[0] ?? '';
    const component = repetition.split(this.encoding.component)[c - 1] ?? '';
    return unescapeHl7(component.split(this.encoding.subcomponent)[0] ?? '', this.encoding).trim();
  }

  /** Every repetition of SEG-n, component 1 of each. */
  repetitions(n: number): string[] {
    const field = this.raw(n);
    if (field === '') return [];
    return field
      .split(this.encoding.repetition)
      .map((r) => unescapeHl7(r.split(this.encoding.component)[0] ?? '', this.encoding).trim())
      .filter((r) => r !== '');
  }
}

export function segmentsIn(frame: RecordFrame): Segment[] | string {
  const encoding = encodingOf(frame.lines[0]?.text ?? '');
  if (typeof encoding === 'string') return encoding;
  return frame.lines.map((line) => new Segment(line, encoding));
}

const NUMBER = /^([<>])?\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+))$/;
const STATUS_FLAGS: Record<string, string> = { P: 'preliminary', R: 'preliminary', I: 'preliminary', S: 'preliminary', C: 'corrected' };
// OBX-11 (HL7 table 0085, from memory): F final, C corrected, P/R/I/S not yet final.
const RESULT_STATUS: Record<string, 'final' | 'preliminary' | 'corrected'> = { F: 'final', C: 'corrected', P: 'preliminary', R: 'preliminary', I: 'preliminary', S: 'preliminary' };
const STATUS_REFUSED: Record<string, string> = { X: 'the result could not be obtained', D: 'the result was deleted', W: 'the result was marked wrong' };

function messageType(msh: Segment): string {
  return `${msh.get(9, 1)}^${msh.get(9, 2)}`;
}

/** ORU^R01 → one reading per OBX, or fragments saying why not. */
export function parseOru(frame: RecordFrame): ParserOutput[] {
  const segments = segmentsIn(frame);
  if (typeof segments === 'string') return [fragment(frame.raw, segments)];
  const msh = segments[0];
  const type = messageType(msh);
  if (type !== 'ORU^R01') return [fragment(frame.raw, `not a result message: MSH-9 is ${type} (Benchwire reads ORU^R01)`)];
  const outputs: ParserOutput[] = [];
  let pid: Segment | undefined;
  let obr: Segment | undefined;
  let spm: Segment | undefined;
  for (let i = 0; i < segments.length; i++) {
    const segment = segments[i];
    if (segment.id === 'PID') {
      pid = segment;
      obr = undefined;
      spm = undefined;
    } else if (segment.id === 'OBR') {
      obr = segment;
      spm = undefined;
      for (let j = i + 1; j < segments.length && segments[j].id !== 'OBR' && segments[j].id !== 'PID'; j++) {
        if (segments[j].id === 'SPM') {
          spm = segments[j];
          break;
        }
      }
    } else if (segment.id === 'OBX') {
      const notes: Segment[] = [];
      while (segments[i + 1]?.id === 'NTE') notes.push(segments[++i]);
      // A reading's raw: the segments it was read from, in the order sent.
      const raw = rawOf([msh, pid, obr, segment, ...notes].filter((s): s is Segment => !!s).map((s) => s.line));
      outputs.push(readObservation(segment, { pid, obr, spm, raw }));
    }
  }
  if (outputs.length === 0) return [fragment(frame.raw, 'message holds no results (no OBX segment)')];
  return outputs;
}

function readObservation(obx: Segment, context: { pid?: Segment; obr?: Segment; spm?: Segment; raw: string }): ParserOutput {
  const seq = obx.get(1) || '?';
  const analyte = obx.get(3, 1) || obx.get(3, 2);
  const fail = (reason: string) => fragment(context.raw, `OBX ${seq}${analyte ? ` ${analyte}` : ''}: ${reason}`);
  if (!analyte) return fail('OBX-3 names no observation');
  const status = obx.get(11).toUpperCase();
  if (STATUS_REFUSED[status]) return fail(`${STATUS_REFUSED[status]} (OBX-11 ${status})`);
  let comparator: string | null = null;
  let valueText: string;
  if (obx.get(2).toUpperCase() === 'SN') {
    // SN: comparator ^ number (^ separator ^ number for ranges and ratios, which are not one value).
    if (obx.get(5, 3) || obx.get(5, 4)) return fail(`OBX-5 is a range or ratio, not one value`);
    comparator = obx.get(5, 1) || null;
    valueText = obx.get(5, 2);
    if (comparator !== null && comparator !== '<' && comparator !== '>') return fail(`OBX-5 comparator "${comparator}" is not < or >`);
  } else {
    valueText = obx.get(5);
  }
  if (valueText === '') return fail('OBX-5 holds no value');
  const number = NUMBER.exec(valueText);
  if (!number) return fail(`OBX-5 "${valueText}" is not a number`);
  comparator ??= number[1] ?? null;
  const when = obx.get(14) || context.obr?.get(7) || '';
  let measuredAt: string | null = null;
  if (when) {
    const time = compactTimestamp(when);
    if (!time.ok) return fail(`${obx.get(14) ? 'OBX-14' : 'OBR-7'} "${when}" ${time.problem}`);
    measuredAt = time.iso;
  }
  const flags = obx.repetitions(8);
  if (STATUS_FLAGS[status]) flags.push(STATUS_FLAGS[status]);
  const reading = parsedReadingSchema.safeParse({
    kind: 'reading',
    analyte,
    value: Number(number[2]),
    comparator,
    unit: obx.get(6, 1) || null,
    flags,
    sampleId: context.obr?.get(3) || context.obr?.get(2) || null,
    patientRef: context.pid?.get(3) || context.pid?.get(2) || null,
    measuredAt,
    instrumentSerial: obx.get(18) || null,
    referenceRange: obx.get(7) || null,
    resultStatus: RESULT_STATUS[status] ?? null,
    specimenRole: context.spm?.get(11, 1).toUpperCase() === 'Q' ? 'control' : undefined,
    raw: context.raw,
  });
  if (reading.success) return reading.data;
  const issue = reading.error.issues[0];
  return fail(`does not fit the contract: ${issue?.path.join('.')} ${issue?.message}`);
}

function escapeHl7(text: string, e: Encoding): string {
  const map: Record<string, string> = { [e.escape]: 'E', [e.field]: 'F', [e.component]: 'S', [e.repetition]: 'R', [e.subcomponent]: 'T' };
  return [...text].map((ch) => (map[ch] ? `${e.escape}${map[ch]}${e.escape}` : ch)).join('');
}

/** The ACK for a message (HL7 v2 chapter 2 acknowledgment, from memory), before its MLLP envelope. */
export function acknowledgment(frame: RecordFrame, outputs: readonly ParserOutput[], context: AnswerContext): string {
  const segments = segmentsIn(frame);
  const e = typeof segments === 'string' ? DEFAULT_ENCODING : segments[0].encoding;
  const msh = typeof segments === 'string' ? undefined : segments[0];
  let code: 'AA' | 'AE' | 'AR';
  let text = '';
  if (!msh) {
    code = 'AR';
    text = typeof segments === 'string' ? segments : '';
  } else if (messageType(msh) !== 'ORU^R01') {
    code = 'AR';
    text = `unsupported message type ${messageType(msh)}; kept for review`;
  } else {
    const unread = outputs.filter((o) => o.kind === 'unparsed');
    code = unread.length ? 'AE' : 'AA';
    if (unread.length) text = `${unread.length} of ${outputs.length} result(s) not read (${unread[0].kind === 'unparsed' ? unread[0].reason : ''}); kept for review`;
  }
  const f = e.field;
  const encodingChars = `${e.component}${e.repetition}${e.escape}${e.subcomponent}`;
  const header = [
    'MSH',
    encodingChars,
    'Benchwire',
    '',
    msh?.raw(3) ?? '',
    msh?.raw(4) ?? '',
    compactStamp(context.now),
    '',
    `ACK${e.component}${msh?.get(9, 2) || 'R01'}${e.component}ACK`,
    `BW${compactStamp(context.now)}${String(context.sequence).padStart(4, '0')}`,
    msh?.raw(11) || 'P',
    msh?.raw(12) || '2.5',
  ];
  const msa = ['MSA', code, msh ? escapeHl7(msh.get(10), e) : '', escapeHl7(text.slice(0, 80), e)];
  return `${header.join(f)}\r${msa.join(f)}\r`;
}

export const hl7v2: Dialect = {
  name: 'hl7v2',
  summary: 'HL7 v2 ORU^R01 result messages over MLLP, each answered with an ACK',
  defaultEncoding: 'utf8',
  controlBytes: MLLP_CONTROL_BYTES,
  framer: (options) => [new MllpFramer({ encoding: options.encoding })],
  parse: parseOru,
  answer: (frame, outputs, context) => mllpWrap(acknowledgment(frame, outputs, context)),
};
