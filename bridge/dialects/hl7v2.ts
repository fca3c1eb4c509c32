import { looksNumeric, readNumber } from '../../lib/validation/numbers';
import { parsedReadingSchema, type CodedValue, type ParserOutput } from '../../lib/validation/readings';
import type { Line } from '../framing/lines';
import { MLLP_CONTROL_BYTES, MllpFramer, mllpWrap } from '../framing/mllp';
import { rawOf, type RecordFrame } from '../framing/records';
import { fragment } from '../fragments';
import { compactOffset, compactStamp, compactTimestamp } from '../local-time';
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

/** Field n of a segment as text: every repetition and component, escapes undone, repetitions on their own lines. */
export function fieldText(segment: Segment, n: number): string {
  return segment
    .raw(n)
    .split(segment.encoding.repetition)
    .map((r) => unescapeHl7(r, segment.encoding).trim())
    .filter((r) => r !== '')
    .join('\n');
}

export function segmentsIn(frame: RecordFrame): Segment[] | string {
  const encoding = encodingOf(frame.lines[0]?.text ?? '');
  if (typeof encoding === 'string') return encoding;
  return frame.lines.map((line) => new Segment(line, encoding));
}

const STATUS_FLAGS: Record<string, string> = { P: 'preliminary', R: 'preliminary', I: 'preliminary', S: 'preliminary', C: 'corrected' };
// OBX-11 (HL7 table 0085, from memory): F final, C corrected, P/R/I/S not yet final.
const RESULT_STATUS: Record<string, 'final' | 'preliminary' | 'corrected'> = { F: 'final', C: 'corrected', P: 'preliminary', R: 'preliminary', I: 'preliminary', S: 'preliminary' };
const STATUS_REFUSED: Record<string, string> = { X: 'the result could not be obtained', D: 'the result was deleted', W: 'the result was marked wrong' };
// OBX-2 value types (HL7 table 0125, from memory): NM numeric, SN structured numeric, CE/CWE/CNE coded,
// ST/TX/FT text. Only NM and SN are read as numbers; a coded or text value is never turned into one.
const NUMERIC_TYPES = new Set(['NM', 'SN']);
const CODED_TYPES = new Set(['CE', 'CWE', 'CNE']);
const TEXT_TYPES = new Set(['ST', 'TX', 'FT']);

function messageType(msh: Segment): string {
  return `${msh.get(9, 1)}^${msh.get(9, 2)}`;
}

/** The messages of an HL7 batch (FHS, BHS … MSH … BTS, FTS; HL7 v2 chapter 2 batch protocol, from memory). */
export function batchMessages(frame: RecordFrame): RecordFrame[] | null {
  const first = frame.lines[0]?.text.slice(0, 3);
  if (first !== 'FHS' && first !== 'BHS') return null;
  const messages: Line[][] = [];
  for (const line of frame.lines) {
    const id = line.text.slice(0, 3);
    if (id === 'MSH') messages.push([line]);
    else if (id === 'FHS' || id === 'BHS' || id === 'BTS' || id === 'FTS') continue;
    else messages.at(-1)?.push(line);
  }
  return messages.map((lines) => ({ kind: 'record', lines, raw: rawOf(lines) }));
}

/** ORU^R01 (or a batch of them) → one reading per OBX, or fragments saying why not. */
export function parseOru(frame: RecordFrame): ParserOutput[] {
  const batch = batchMessages(frame);
  if (batch) {
    if (batch.length === 0) return [fragment(frame.raw, 'batch holds no messages (no MSH segment between its header and trailer)')];
    return batch.flatMap((message) => parseMessage(message));
  }
  return parseMessage(frame);
}

function parseMessage(frame: RecordFrame): ParserOutput[] {
  const segments = segmentsIn(frame);
  if (typeof segments === 'string') return [fragment(frame.raw, segments)];
  const msh = segments[0];
  const type = messageType(msh);
  if (type !== 'ORU^R01') return [fragment(frame.raw, `not a result message: MSH-9 is ${type} (Benchwire reads ORU^R01)`)];
  // A time without its own offset is in the sender's offset, which MSH-7 states when it has one.
  const senderOffset = compactOffset(msh.get(7));
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
      // v2.5 ORU^R01: the order's SPM (specimen) follows its observations, so look ahead within the order.
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
      const raw = rawOf([msh, pid, obr, spm, segment, ...notes].filter((s): s is Segment => !!s).map((s) => s.line));
      outputs.push(readObservation(segment, { pid, obr, spm, notes, senderOffset, raw }));
    }
  }
  if (outputs.length === 0) return [fragment(frame.raw, 'message holds no results (no OBX segment)')];
  return outputs;
}

type NumericRead = { ok: true; value: number; comparator: '<' | '>' | null; decimals: number } | { ok: false; reason: string };

/** An NM or SN observation's value (HL7 v2 chapter 2: NM is an optional sign, digits and an optional decimal point). */
function readNumeric(obx: Segment): NumericRead {
  const type = obx.get(2).toUpperCase();
  const repeats = obx.raw(5).split(obx.encoding.repetition).filter((r) => r !== '');
  if (repeats.length > 1) {
    return { ok: false, reason: `OBX-5 holds ${repeats.length} repetitions of a number; Benchwire keeps one value per result, so the observation is kept for review instead of keeping only the first` };
  }
  let comparator: string | null = null;
  let valueText: string;
  if (type === 'SN') {
    // SN: comparator ^ number (^ separator ^ number for ranges and ratios, which are not one value).
    if (obx.get(5, 3) || obx.get(5, 4)) return { ok: false, reason: 'OBX-5 is a range or ratio, not one value' };
    comparator = obx.get(5, 1) || null;
    valueText = obx.get(5, 2);
    if (comparator !== null && comparator !== '<' && comparator !== '>') return { ok: false, reason: `OBX-5 comparator "${comparator}" is not < or >` };
  } else {
    valueText = obx.get(5);
  }
  if (valueText === '') return { ok: false, reason: 'OBX-5 holds no value' };
  if (looksNumeric(valueText) && /[eE]/.test(valueText)) return { ok: false, reason: `OBX-5 "${valueText}" should be a number (${type}), and HL7 numbers have no exponent` };
  const number = readNumber(valueText, 'point');
  if (!number.ok) return { ok: false, reason: `OBX-5 should be a number (${type}): ${number.reason}` };
  if (comparator !== null && number.comparator !== null) return { ok: false, reason: `OBX-5 has two comparators` };
  return { ok: true, value: number.value, comparator: (comparator as '<' | '>' | null) ?? number.comparator, decimals: number.decimals };
}

/** Whether an observation should be a number but cannot be read as one (the only case answered AE). */
export function unreadNumber(obx: Segment): boolean {
  if (!NUMERIC_TYPES.has(obx.get(2).toUpperCase())) return false;
  if (STATUS_REFUSED[obx.get(11).toUpperCase()]) return false;
  return !readNumeric(obx).ok;
}

function readObservation(
  obx: Segment,
  context: { pid?: Segment; obr?: Segment; spm?: Segment; notes: Segment[]; senderOffset: string | null; raw: string },
): ParserOutput {
  const seq = obx.get(1) || '?';
  const analyte = obx.get(3, 1) || obx.get(3, 2);
  const fail = (reason: string) => fragment(context.raw, `OBX ${seq}${analyte ? ` ${analyte}` : ''}: ${reason}`);
  if (!analyte) return fail('OBX-3 names no observation');
  const status = obx.get(11).toUpperCase();
  if (STATUS_REFUSED[status]) return fail(`${STATUS_REFUSED[status]} (OBX-11 ${status})`);
  const type = obx.get(2).toUpperCase();
  const notes = context.notes.map((nte) => fieldText(nte, 3)).filter((n) => n !== '');
  let value: number | null = null;
  let comparator: '<' | '>' | null = null;
  let decimals: number | null = null;
  let code: CodedValue | null = null;
  let text: string | null = null;
  if (obx.raw(5) === '') return fail('OBX-5 holds no value');
  if (NUMERIC_TYPES.has(type)) {
    const number = readNumeric(obx);
    if (!number.ok) return fail(number.reason);
    value = number.value;
    comparator = number.comparator;
    decimals = number.decimals;
  } else if (CODED_TYPES.has(type)) {
    // CE/CWE: identifier ^ text ^ name of coding system; further repetitions are kept as notes, not dropped.
    const [first, ...more] = obx.raw(5).split(obx.encoding.repetition).filter((r) => r !== '');
    const part = (repeat: string, c: number) => unescapeHl7((repeat.split(obx.encoding.component)[c - 1] ?? '').split(obx.encoding.subcomponent)[0] ?? '', obx.encoding).trim();
    if (part(first, 1)) code = { code: part(first, 1), display: part(first, 2) || null, system: part(first, 3) || null };
    else if (part(first, 2)) text = part(first, 2);
    else return fail(`OBX-5 (${type}) holds neither a code nor its text`);
    for (const repeat of more) notes.push(`Also sent in OBX-5: ${[part(repeat, 1), part(repeat, 2)].filter(Boolean).join(' ')}`);
  } else if (TEXT_TYPES.has(type)) {
    text = fieldText(obx, 5);
  } else if (type === '') {
    // No value type: a plain number is read as one; anything else stays text, as sent.
    const number = readNumber(obx.get(5), 'point');
    if (number.ok && !obx.raw(5).includes(obx.encoding.repetition)) {
      value = number.value;
      comparator = number.comparator;
      decimals = number.decimals;
    } else text = fieldText(obx, 5);
  } else {
    text = fieldText(obx, 5);
    notes.push(`Value type ${type} kept as text.`);
  }
  const when = obx.get(14) || context.obr?.get(7) || '';
  let measuredAt: string | null = null;
  if (when) {
    const time = compactTimestamp(when, context.senderOffset);
    if (!time.ok) return fail(`${obx.get(14) ? 'OBX-14' : 'OBR-7'} "${when}" ${time.problem}`);
    measuredAt = time.iso;
  }
  const flags = obx.repetitions(8);
  if (STATUS_FLAGS[status]) flags.push(STATUS_FLAGS[status]);
  // SPM-2 (v2.5 specimen ID: placer ^ filler assigned identifier) when present, else OBR-3 filler / OBR-2 placer order number.
  const specimen = context.spm ? context.spm.get(2, 1) || context.spm.get(2, 2) : '';
  const reading = parsedReadingSchema.safeParse({
    kind: 'reading',
    analyte,
    value,
    comparator,
    decimals,
    code,
    text,
    notes,
    unit: obx.get(6, 1) || null,
    flags,
    sampleId: specimen || context.obr?.get(3) || context.obr?.get(2) || null,
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

type AckCode = 'AA' | 'AE' | 'AR' | 'CA' | 'CE' | 'CR';

/** When MSH-15 / MSH-16 ask for an acknowledgment (HL7 table 0155, from memory): AL always, NE never, ER on error, SU on success. */
function wanted(condition: string, success: boolean): boolean {
  if (condition === 'NE') return false;
  if (condition === 'ER') return !success;
  if (condition === 'SU') return success;
  return true;
}

/** The verdict on one message: application code (AA/AE/AR) and the text for MSA-3. */
function verdict(msh: Segment | undefined, segments: Segment[] | string, outputs: readonly ParserOutput[]): { code: 'AA' | 'AE' | 'AR'; text: string } {
  if (!msh) return { code: 'AR', text: typeof segments === 'string' ? segments : '' };
  if (messageType(msh) !== 'ORU^R01') return { code: 'AR', text: `unsupported message type ${messageType(msh)}; kept for review` };
  // AE only when an observation that should be a number cannot be read: a text or coded value, or an
  // observation the analyzer itself marked as not obtained, was read as sent and needs no resend.
  const numbers = (segments as Segment[]).filter((s) => s.id === 'OBX' && unreadNumber(s));
  if (numbers.length === 0) return { code: 'AA', text: '' };
  const unread = outputs.find((o) => o.kind === 'unparsed');
  return { code: 'AE', text: `${numbers.length} numeric result(s) not read (${unread?.kind === 'unparsed' ? unread.reason : ''}); kept for review` };
}

/**
 * The acknowledgment(s) for one message (HL7 v2 chapter 2, from memory), before the MLLP envelope.
 * Original mode (MSH-15 and MSH-16 empty): one ACK with AA/AE/AR. Enhanced mode: an accept ACK
 * (CA/CE/CR) when MSH-15 asks, then an application ACK (AA/AE/AR) when MSH-16 asks.
 * The ACK's MSH-3/4 name us (the configured receiving application and facility, else what the sender
 * addressed in its MSH-5/6); its MSH-5/6 are the sender's MSH-3/4.
 */
export function acknowledgments(frame: RecordFrame, outputs: readonly ParserOutput[], context: AnswerContext, index = 0): string[] {
  const segments = segmentsIn(frame);
  const e = typeof segments === 'string' ? DEFAULT_ENCODING : segments[0].encoding;
  const msh = typeof segments === 'string' ? undefined : segments[0];
  const { code, text } = verdict(msh, segments, outputs);
  const f = e.field;
  const encodingChars = `${e.component}${e.repetition}${e.escape}${e.subcomponent}`;
  const ack = (ackCode: AckCode, ackText: string, n: number) => {
    const header = [
      'MSH',
      encodingChars,
      escapeHl7(context.application || msh?.get(5) || 'Benchwire', e),
      escapeHl7(context.facility || msh?.get(6) || '', e),
      msh?.raw(3) ?? '',
      msh?.raw(4) ?? '',
      compactStamp(context.now),
      '',
      `ACK${e.component}${msh?.get(9, 2) || 'R01'}${e.component}ACK`,
      `BW${compactStamp(context.now)}${String(context.sequence).padStart(4, '0')}${index + n ? `-${index + n}` : ''}`,
      msh?.raw(11) || 'P',
      msh?.raw(12) || '2.5',
    ];
    const msa = ['MSA', ackCode, msh ? escapeHl7(msh.get(10), e) : '', escapeHl7(ackText.slice(0, 80), e)];
    return `${header.join(f)}\r${msa.join(f)}\r`;
  };
  const acceptType = msh?.get(15).toUpperCase() ?? '';
  const applicationType = msh?.get(16).toUpperCase() ?? '';
  if (!acceptType && !applicationType) return [ack(code, text, 0)];
  // Enhanced mode. Accepted: the message is safely held (it is spooled whatever it holds); rejected:
  // it is not a message we take (no MSH, or not a result message).
  const accept: AckCode = code === 'AR' ? 'CR' : 'CA';
  const out: string[] = [];
  if (wanted(acceptType || 'AL', accept === 'CA')) out.push(ack(accept, accept === 'CR' ? text : '', 0));
  if (accept === 'CA' && applicationType && wanted(applicationType, code === 'AA')) out.push(ack(code, text, 1));
  return out;
}

/** The single ACK of a message in original mode; kept for callers that want one string. */
export function acknowledgment(frame: RecordFrame, outputs: readonly ParserOutput[], context: AnswerContext): string {
  return acknowledgments(frame, outputs, context).join('');
}

/** An HL7 batch is answered with a batch of acknowledgments, one per message (HL7 v2 batch protocol, from memory). */
function answerBatch(frame: RecordFrame, batch: RecordFrame[], outputs: readonly ParserOutput[], context: AnswerContext): string {
  const header = segmentsIn({ ...frame, lines: [{ ...frame.lines[0], text: `MSH${frame.lines[0].text.slice(3)}` }] });
  const e = typeof header === 'string' ? DEFAULT_ENCODING : header[0].encoding;
  const bhs = typeof header === 'string' ? undefined : header[0];
  // Parsing is pure, so each message's own outputs are read again here rather than picked out of the batch's.
  void outputs;
  const acks = batch.flatMap((message, i) => acknowledgments(message, parseMessage(message), context, i * 2));
  const f = e.field;
  const head = ['BHS', `${e.component}${e.repetition}${e.escape}${e.subcomponent}`, context.application || bhs?.get(5) || 'Benchwire', context.facility || bhs?.get(6) || '', bhs?.raw(3) ?? '', bhs?.raw(4) ?? '', compactStamp(context.now)];
  return `${head.join(f)}\r${acks.join('')}BTS${f}${acks.length}\r`;
}

export const hl7v2: Dialect = {
  name: 'hl7v2',
  summary: 'HL7 v2 ORU^R01 result messages over MLLP, each answered with an ACK',
  defaultEncoding: 'utf8',
  controlBytes: MLLP_CONTROL_BYTES,
  framer: (options) => [new MllpFramer({ encoding: options.encoding, followCharset: !options.encodingChosen })],
  parse: parseOru,
  answer: (frame, outputs, context) => {
    const batch = batchMessages(frame);
    if (batch) return mllpWrap(answerBatch(frame, batch, outputs, context));
    return Buffer.concat(acknowledgments(frame, outputs, context).map((message) => mllpWrap(message)));
  },
};
