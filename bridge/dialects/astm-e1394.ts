import { Transform, type TransformCallback } from 'node:stream';
import { looksNumeric, readNumber, type DecimalMark } from '../../lib/validation/numbers';
import { parsedReadingSchema, type CodedValue, type ParserOutput } from '../../lib/validation/readings';
import { ASTM_CONTROL_BYTES, AstmLinkStage, type AstmLinkOutput } from '../framing/astm-e1381';
import type { Line } from '../framing/lines';
import { rawOf, type FramerOutput, type RecordFrame } from '../framing/records';
import { fragment, fragments } from '../fragments';
import { compactStamp, compactTimestamp } from '../local-time';
import type { Dialect, ParseOptions } from './dialect';

// ASTM E1394 / CLSI LIS2-A2 record layer, from our reading of the standard (field numbers from memory).
// A message is H … L; each record is one line ending in CR; field 1 is the record type, so field n
// is the n-th piece when the record is split on the field delimiter. The H record defines the
// delimiters: H.1 "H", then field, repeat, component and escape delimiter (usually |\^&).
//   P.3 practice-assigned patient ID (P.4, P.5 lab-assigned / third patient ID as fallbacks)
//   O.3 specimen ID (O.4 instrument specimen ID as fallback); O.12 action code, "Q" = treat the specimen
//   as a quality-control specimen
//   R.3 universal test ID ^^^local code, R.4 value, R.5 units, R.6 reference range, R.7 abnormal
//   flags, R.9 result status, R.13 date/time test completed, R.14 instrument identification
//   C.3 comment source, C.4 comment text (components joined), C.5 comment type → the result's notes
//   H.5 sender name or ID (name^version^serial by common practice)
//   L.3 termination code (I: no information available from the last query)

const MAX_RECORDS = 2000;
const MAX_MESSAGE_CHARS = 4 * 1024 * 1024;

export interface Delimiters {
  field: string;
  repeat: string;
  component: string;
  escape: string;
}

export const DEFAULT_DELIMITERS: Delimiters = { field: '|', repeat: '\\', component: '^', escape: '&' };

/** Delimiters from an H record: H, then field, repeat, component, escape (E1394 header, from memory). */
export function delimitersOf(header: string): Delimiters | string {
  if (header[0] !== 'H' || header.length < 5) return 'the H record does not define its delimiters';
  const [field, repeat, component, escape] = header.slice(1, 5);
  if (new Set([field, repeat, component, escape]).size !== 4) return 'the H record names the same delimiter twice';
  if (/[A-Za-z0-9\r\n]/.test(field + repeat + component + escape)) return 'the H record delimiters are letters or digits';
  return { field, repeat, component, escape };
}

/** Undo E1394 escapes: &F& &S& &R& &E& (delimiters) and &Xhh…& (hex bytes); others stay as sent. */
export function unescape(text: string, d: Delimiters): string {
  if (!text.includes(d.escape)) return text;
  const e = escapeRegExp(d.escape);
  return text.replace(new RegExp(`${e}([FSRE]|X(?:[0-9A-Fa-f]{2})+)${e}`, 'g'), (_match, code: string) => {
    if (code === 'F') return d.field;
    if (code === 'S') return d.component;
    if (code === 'R') return d.repeat;
    if (code === 'E') return d.escape;
    return Buffer.from(code.slice(1), 'hex').toString('latin1');
  });
}

function escapeRegExp(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

/** One record's fields; field(n) is field n (1 = record type), as repeats of components, unescaped. */
export class AstmRecord {
  readonly type: string;
  private readonly fields: string[];

  constructor(
    readonly line: Line,
    readonly delimiters: Delimiters,
  ) {
    // The H record's own field 2 holds the delimiters themselves, so it is not split like the others.
    const text = line.text;
    this.type = text[0] ?? '';
    this.fields = this.type === 'H' ? ['H', text.slice(2, 5), ...text.slice(6).split(delimiters.field)] : text.split(delimiters.field);
  }

  /** Field n as sent (still escaped); '' when absent. */
  rawField(n: number): string {
    return this.fields[n - 1] ?? '';
  }

  /** Repeats of field n, each split into unescaped components. */
  repeats(n: number): string[][] {
    const field = this.rawField(n);
    if (field === '') return [];
    return field.split(this.delimiters.repeat).map((repeat) => repeat.split(this.delimiters.component).map((c) => unescape(c, this.delimiters)));
  }

  /** Component c (1-based) of the first repeat of field n, unescaped and trimmed. */
  component(n: number, c = 1): string {
    return (this.repeats(n)[0]?.[c - 1] ?? '').trim();
  }

  /** The first non-empty component of field n's first repeat. */
  firstComponent(n: number): string {
    return (this.repeats(n)[0] ?? []).map((c) => c.trim()).find((c) => c !== '') ?? '';
  }
}

/** Records of one message (H … L), from a frame whose lines are records. */
export function recordsOf(frame: RecordFrame): AstmRecord[] | string {
  const header = frame.lines[0]?.text ?? '';
  const delimiters = delimitersOf(header);
  if (typeof delimiters === 'string') return delimiters;
  return frame.lines.map((line) => new AstmRecord(line, delimiters));
}

/** A message (H … L) → one reading per R record, or fragments saying why not. */
export function parseMessage(frame: RecordFrame, options: ParseOptions = {}): ParserOutput[] {
  const records = recordsOf(frame);
  if (typeof records === 'string') return [fragment(frame.raw, records)];
  const header = records[0];
  const terminator = records.at(-1);
  const serial = header.component(5, 3) || null;
  if (records.some((r) => r.type === 'Q')) {
    return [fragment(frame.raw, 'host query from the instrument (answered: no information; Benchwire sends no orders)')];
  }
  const outputs: ParserOutput[] = [];
  let patient: AstmRecord | undefined;
  let order: AstmRecord | undefined;
  for (let i = 0; i < records.length; i++) {
    const record = records[i];
    if (record.type === 'P') {
      patient = record;
      order = undefined;
    } else if (record.type === 'O') {
      order = record;
    } else if (record.type === 'R') {
      const comments: AstmRecord[] = [];
      while (records[i + 1]?.type === 'C') comments.push(records[++i]);
      // A reading's raw: the records it was read from, in the order sent (header through terminator).
      const own = [header, patient, order, record, ...comments, terminator].filter((r, at, all): r is AstmRecord => !!r && all.indexOf(r) === at);
      const notes = comments.map((c) => (c.repeats(4)[0] ?? []).map((part) => part.trim()).filter(Boolean).join(' ')).filter(Boolean);
      outputs.push(readResult(record, { patient, order, serial, notes, decimalMark: options.decimalMark ?? 'point', raw: rawOf(own.map((r) => r.line)) }));
    }
  }
  if (outputs.length === 0) return [fragment(frame.raw, 'message holds no results (no R record)')];
  return outputs;
}

/** A word result (POS, NEG, 1+, TRACE): letters, digits and + - / only, at most 32 characters, and not a number. */
const WORD = /^(?=.*[A-Za-z+])[A-Za-z0-9 +\-/]{1,32}$/;
const STATUS_FLAGS: Record<string, string> = { P: 'preliminary', I: 'preliminary', S: 'preliminary', C: 'corrected', W: 'questionable' };
// R.9 result status (LIS2-A2, from memory): F final, C correction, P/I/S not yet final.
const RESULT_STATUS: Record<string, 'final' | 'preliminary' | 'corrected'> = { F: 'final', C: 'corrected', P: 'preliminary', I: 'preliminary', S: 'preliminary' };

function readResult(
  record: AstmRecord,
  context: { patient?: AstmRecord; order?: AstmRecord; serial: string | null; notes: string[]; decimalMark: DecimalMark; raw: string },
): ParserOutput {
  const seq = record.rawField(2) || '?';
  const fail = (reason: string) => fragment(context.raw, `R ${seq}: ${reason}`);
  const analyte = record.component(3, 4) || record.firstComponent(3);
  if (!analyte) return fail('R.3 names no test');
  const status = record.component(9).toUpperCase();
  if (status === 'X') return fail(`${analyte}: the instrument could not do the test (R.9 status X)`);
  const valueText = record.firstComponent(4);
  if (valueText === '') return fail(`${analyte}: R.4 holds no value`);
  // A number in the instrument's own decimal mark (never guessed), else a word result such as POS or NEG.
  let value: number | null = null;
  let comparator: '<' | '>' | null = null;
  let decimals: number | null = null;
  let code: CodedValue | null = null;
  if (looksNumeric(valueText)) {
    const number = readNumber(valueText, context.decimalMark);
    if (!number.ok) return fail(`${analyte}: R.4 ${number.reason}`);
    value = number.value;
    comparator = number.comparator;
    decimals = number.decimals;
  } else if (WORD.test(valueText)) {
    code = { system: null, code: valueText, display: null };
  } else {
    return fail(`${analyte}: R.4 "${valueText}" is neither a number nor a word result`);
  }
  const completed = record.component(13);
  let measuredAt: string | null = null;
  if (completed) {
    const time = compactTimestamp(completed);
    if (!time.ok) return fail(`${analyte}: R.13 completion time "${completed}" ${time.problem}`);
    measuredAt = time.iso;
  }
  const flags = record.repeats(7).map((r) => r.join('').trim()).filter((f) => f !== '');
  if (STATUS_FLAGS[status]) flags.push(STATUS_FLAGS[status]);
  const patientRef = context.patient ? context.patient.firstComponent(3) || context.patient.firstComponent(4) || context.patient.firstComponent(5) : '';
  const sampleId = context.order ? context.order.firstComponent(3) || context.order.firstComponent(4) : '';
  const reading = parsedReadingSchema.safeParse({
    kind: 'reading',
    analyte,
    value,
    comparator,
    decimals,
    code,
    notes: context.notes,
    unit: record.component(5) || null,
    flags,
    sampleId: sampleId || null,
    patientRef: patientRef || null,
    measuredAt,
    instrumentSerial: record.firstComponent(14) || context.serial,
    // R.6 lower^upper (LIS2-A2, from memory), written "lower to upper"; a range sent as text stays as sent.
    referenceRange: (record.repeats(6)[0] ?? []).map((c) => c.trim()).filter(Boolean).join(' to ') || null,
    resultStatus: RESULT_STATUS[status] ?? null,
    specimenRole: context.order && context.order.component(12).toUpperCase() === 'Q' ? 'control' : undefined,
    raw: context.raw,
  });
  if (reading.success) return reading.data;
  const issue = reading.error.issues[0];
  return fail(`${analyte}: does not fit the contract: ${issue?.path.join('.')} ${issue?.message}`);
}

export interface AssemblerOptions {
  /** A complete message held a Q record: answer it (E1394 host query). */
  onQuery?(header: AstmRecord): void;
}

/**
 * Link text → messages: splits records at CR, groups H … L into one RecordFrame (lines = records).
 * Records outside a message, and messages cut short by the session's end, become fragments.
 */
export class AstmMessageAssembler extends Transform {
  private text = '';
  private message: Line[] = [];
  private stray: Line[] = [];
  /**
   * After frames went missing (a replayed capture with a gap): the message they were in, kept unread until
   * its L record or the next H record. Missing records could be a patient or an order, so nothing after
   * the gap may be read as part of what came before it; the first record after the gap may itself be a
   * tail, so even an H there does not end it.
   */
  private broken: { reason: string; raw: string; afterGap: number } | undefined;

  constructor(private readonly options: AssemblerOptions = {}) {
    super({ objectMode: true });
  }

  override _transform(input: AstmLinkOutput, _encoding: BufferEncoding, callback: TransformCallback): void {
    if (input.kind === 'unparsed') {
      this.push(input);
    } else if (input.kind === 'text') {
      this.text += input.text;
      this.takeRecords();
    } else if (input.kind === 'gap') {
      this.gap(input.reason, input.partial);
    } else {
      this.sessionEnded(input.abandoned, input.partial);
    }
    callback();
  }

  override _flush(callback: TransformCallback): void {
    this.sessionEnded('input ended in the middle of a message');
    callback();
  }

  /** Records end at CR; text left at the end of a block is a record whose sender left off the CR. */
  private takeRecords(): void {
    let end: number;
    while ((end = this.text.indexOf('\r')) !== -1 || this.text !== '') {
      if (end === -1) end = this.text.length;
      // Some senders put LF after each record's CR; it belongs to the record's ending.
      const next = this.text[end + 1] === '\n' ? end + 2 : end + 1;
      const raw = this.text.slice(0, next);
      this.text = this.text.slice(next);
      const text = raw.slice(0, end).replace(/^\n+/, '');
      if (text.trim() === '') continue;
      this.takeRecord({ raw, text, overlong: false });
    }
  }

  private gap(reason: string, partial: string): void {
    const before = this.broken ? this.broken.raw : '';
    const reasonNow = this.broken ? this.broken.reason : reason;
    this.flushStray();
    this.broken = { reason: reasonNow, raw: before + rawOf(this.message) + partial, afterGap: 0 };
    this.message = [];
  }

  private flushBroken(leftover = ''): void {
    if (!this.broken) return;
    const raw = this.broken.raw + leftover;
    const reason = `message cut by a gap: ${this.broken.reason}`;
    this.broken = undefined;
    if (raw.trim() !== '') for (const piece of fragments(raw, reason)) this.out(piece);
  }

  private takeRecord(line: Line): void {
    const type = line.text[0];
    if (this.broken) {
      if (type === 'H' && this.broken.afterGap > 0) {
        this.flushBroken();
      } else {
        this.broken.raw += line.raw;
        this.broken.afterGap++;
        if (type === 'L' || this.broken.raw.length > MAX_MESSAGE_CHARS) this.flushBroken();
        return;
      }
    }
    if (type === 'H') {
      this.flushStray();
      if (this.message.length) this.out(fragment(rawOf(this.message), 'message cut short: a new H record came before its L record'));
      this.message = [line];
      return;
    }
    if (this.message.length === 0) {
      this.stray.push(line);
      if (this.stray.length >= MAX_RECORDS) this.flushStray();
      return;
    }
    this.message.push(line);
    if (type === 'L') {
      const frame: RecordFrame = { kind: 'record', lines: this.message, raw: rawOf(this.message) };
      this.message = [];
      this.answerQuery(frame);
      this.out(frame);
    } else if (this.message.length >= MAX_RECORDS || this.message.reduce((sum, l) => sum + l.raw.length, 0) > MAX_MESSAGE_CHARS) {
      for (const piece of fragments(rawOf(this.message), `message cut short: more than ${MAX_RECORDS} records or ${MAX_MESSAGE_CHARS} characters without an L record`)) this.out(piece);
      this.message = [];
    }
  }

  private answerQuery(frame: RecordFrame): void {
    const records = recordsOf(frame);
    if (typeof records !== 'string' && records.some((r) => r.type === 'Q')) this.options.onQuery?.(records[0]);
  }

  private sessionEnded(abandoned?: string, partial?: string): void {
    if (this.broken) {
      this.flushBroken(rawOf(this.message) + (partial ?? ''));
      this.message = [];
      return this.flushStray();
    }
    const leftover = partial ?? '';
    const cut = abandoned ? `message cut short: ${abandoned}` : 'message cut short: session ended before its L record';
    if (this.message.length) {
      const raw = rawOf(this.message) + leftover;
      this.message = [];
      this.out(fragment(raw, cut));
    } else if (leftover.trim() !== '') {
      this.flushStray();
      this.out(fragment(leftover, cut));
    }
    this.flushStray();
  }

  private flushStray(): void {
    const raw = rawOf(this.stray);
    this.stray = [];
    if (raw.trim() !== '') this.out(fragment(raw, 'records outside a message (no H record before them)'));
  }

  private out(output: FramerOutput): void {
    this.push(output);
  }
}

/** Our answer to a host query: nothing to report (L.3 = I, no information available, from memory). */
export function noInformationAnswer(query: AstmRecord, now: Date): string[] {
  const d = query.delimiters;
  const stamp = compactStamp(now);
  const receiver = query.rawField(5);
  const header = ['H', `${d.repeat}${d.component}${d.escape}`, '', '', 'Benchwire', '', '', '', '', receiver, '', 'P', 'LIS2-A2', stamp];
  return [`H${d.field}${header.slice(1).join(d.field)}`, ['L', '1', 'I'].join(d.field)];
}

export const astmE1394: Dialect = {
  name: 'astm-e1394',
  summary: 'ASTM E1381 link (ENQ, checksummed frames, EOT) carrying E1394 records H P O R C L',
  defaultEncoding: 'latin1',
  controlBytes: ASTM_CONTROL_BYTES,
  framer(options) {
    const link = new AstmLinkStage({
      reply: options.reply,
      encoding: options.encoding,
      log: options.log,
      name: options.name,
      timers: options.idle !== false,
      onProblem: options.onProblem,
    });
    const assembler = new AstmMessageAssembler({ onQuery: (header) => link.send(noInformationAnswer(header, new Date())) });
    return [link, assembler];
  },
  parse: parseMessage,
};

