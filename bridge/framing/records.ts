import { Transform, type TransformCallback } from 'node:stream';
import type { UnparsedFragment } from '../../lib/validation/readings';
import type { Line } from './lines';
import type { LinePattern } from '../../lib/validation/pattern';
import { fragment } from '../fragments';

/** Lines from a start line through an end line, as printed (or the records of one protocol message). */
export interface RecordFrame {
  kind: 'record';
  lines: Line[];
  /** The exact text of all its lines, line endings included. */
  raw: string;
}

export type FramerOutput = RecordFrame | UnparsedFragment;

/** A line pattern: a built-in RegExp, or an administrator's pattern compiled for the linear-time engine. */
export type LineTest = RegExp | Pick<LinePattern, 'test'>;

/**
 * How one printout format marks its records; plain data so it can come from a stored profile.
 * At least one of start, end, formFeed or gapMs says where records are.
 */
export interface RecordFraming {
  /** A record starts at a matching line; without it, at any non-blank line. */
  start?: LineTest;
  /** A record ends at a matching line (included). */
  end?: LineTest;
  /** A form feed (page eject) ends a record. */
  formFeed?: boolean;
  /**
   * Formats without an end line whose dialect can still tell a record is whole from its lines (every
   * field a profile defines has been read): the record ends at that line, with no quiet time to wait for.
   */
  complete?(lines: readonly Line[]): boolean;
  /** The line going quiet this long ends a record normally (live links only). */
  gapMs?: number;
  /** A record longer than this (start and end line included) is cut short. */
  maxLines: number;
  /** Quiet time after which an unfinished record is given up on; none in batch mode. */
  idleMs?: number;
  /** Upper bound on one output's raw text, so it always fits the contract's raw limit. */
  maxChars?: number;
}

export const DEFAULT_MAX_CHARS = 65536;
export const OUTSIDE_RECORD = 'text outside any record';

/**
 * Line → record grouping, synchronous and without timers (the caller says when the line went quiet).
 * Stray non-blank lines between records are kept together as one unparsed fragment; a record that
 * never reaches its end becomes an unparsed fragment saying why. Whitespace-only lines outside
 * records are paper spacing and produce nothing.
 */
export class RecordGrouper {
  private readonly startPattern: LineTest | undefined;
  private readonly endPattern: LineTest | undefined;
  private readonly formFeed: boolean;
  private readonly maxLines: number;
  private readonly maxChars: number;
  private record: Line[] | null = null;
  private stray: Line[] = [];
  /** Blank lines after stray text: kept only if more stray text follows, so raw stays exact. */
  private blanksAfterStray: Line[] = [];
  private out: FramerOutput[] = [];

  constructor(private readonly framing: RecordFraming) {
    this.startPattern = framing.start && withoutState(framing.start);
    this.endPattern = framing.end && withoutState(framing.end);
    this.formFeed = framing.formFeed ?? false;
    this.maxLines = framing.maxLines;
    this.maxChars = framing.maxChars ?? DEFAULT_MAX_CHARS;
    if (!Number.isInteger(this.maxLines) || this.maxLines < 1) throw new RangeError('maxLines must be a positive integer');
    if (framing.idleMs !== undefined && !(framing.idleMs > 0)) throw new RangeError('idleMs must be positive');
    if (framing.gapMs !== undefined && !(framing.gapMs > 0)) throw new RangeError('gapMs must be positive');
    if (!this.startPattern && !this.endPattern && !this.formFeed && framing.gapMs === undefined) {
      throw new RangeError('say where records are: a start or end pattern, a form feed or a gap');
    }
  }

  /** Something is held (an open record or stray text) that a quiet line would settle. */
  get holding(): boolean {
    return this.record !== null || this.stray.length > 0;
  }

  take(line: Line): FramerOutput[] {
    const isStart = this.startPattern?.test(line.text) ?? false;
    if (this.record) {
      if (this.record.length >= this.maxLines) {
        this.giveUpRecord(`record cut short: more than ${this.maxLines} lines without an end line`);
      } else if (charsOf(this.record) + line.raw.length > this.maxChars) {
        this.giveUpRecord(`record cut short: more than ${this.maxChars} characters without an end line`);
      } else if (isStart) {
        // Without an end pattern the next start is how a record ends.
        if (this.endPattern) this.giveUpRecord('record cut short: a new record started before the end line');
        else this.emitRecord();
      } else {
        this.record.push(line);
        if (this.ends(line)) this.emitRecord();
        return this.drain();
      }
    }
    const blank = line.text.trim() === '';
    if (isStart || (!this.startPattern && !blank)) {
      this.flushStray();
      this.record = [line];
      if (this.ends(line)) this.emitRecord();
      return this.drain();
    }
    if (blank) {
      if (this.stray.length === 0) return this.drain();
      // A long run of blank lines ends the stray text; the blanks themselves are spacing.
      if (this.blanksAfterStray.length >= this.maxLines) this.flushStray();
      else this.blanksAfterStray.push(line);
      return this.drain();
    }
    const adding = [...this.blanksAfterStray, line];
    if (this.stray.length + adding.length > this.maxLines || charsOf(this.stray) + charsOf(adding) > this.maxChars) {
      // Blank lines where one fragment ends and the next begins are spacing, like those between records.
      this.flushStray();
      this.stray.push(line);
    } else {
      this.blanksAfterStray = [];
      this.stray.push(...adding);
    }
    return this.drain();
  }

  /** The input ended. An end line is visible in the text; a form feed or a gap need not be. */
  end(): FramerOutput[] {
    if (this.endPattern) this.giveUpRecord('record cut short: input ended before the end line');
    else if (this.record) this.emitRecord();
    this.flushStray();
    return this.drain();
  }

  /** The line has been quiet for the gap (a normal end) or the idle time (giving up). */
  quiet(): FramerOutput[] {
    if (this.framing.gapMs !== undefined) {
      if (this.record) this.emitRecord();
    } else {
      this.giveUpRecord(`record cut short: no end line within ${Math.round((this.framing.idleMs ?? 0) / 100) / 10} s`);
    }
    this.flushStray();
    return this.drain();
  }

  private ends(line: Line): boolean {
    return (
      (this.endPattern?.test(line.text) ?? false) ||
      (this.formFeed && line.raw.endsWith('\f')) ||
      (this.record !== null && (this.framing.complete?.(this.record) ?? false))
    );
  }

  private drain(): FramerOutput[] {
    const out = this.out;
    this.out = [];
    return out;
  }

  private emitRecord(): void {
    const lines = this.record ?? [];
    this.record = null;
    this.out.push({ kind: 'record', lines, raw: rawOf(lines) } satisfies RecordFrame);
  }

  private giveUpRecord(reason: string): void {
    if (!this.record) return;
    const raw = rawOf(this.record);
    this.record = null;
    this.out.push(fragment(raw, reason));
  }

  private flushStray(): void {
    this.blanksAfterStray = [];
    if (this.stray.length === 0) return;
    const raw = rawOf(this.stray);
    this.stray = [];
    this.out.push(fragment(raw, OUTSIDE_RECORD));
  }
}

/** Stream stage around RecordGrouper: Line objects in, records and fragments out; the quiet timer lives here. */
export class RecordFramer extends Transform {
  private readonly grouper: RecordGrouper;
  private readonly quietMs: number | undefined;
  private idleTimer: NodeJS.Timeout | undefined;

  constructor(framing: RecordFraming) {
    super({ objectMode: true });
    this.grouper = new RecordGrouper(framing);
    this.quietMs = framing.gapMs ?? framing.idleMs;
  }

  override _transform(line: Line, _encoding: BufferEncoding, callback: TransformCallback): void {
    this.clearIdleTimer();
    for (const output of this.grouper.take(line)) this.push(output);
    this.armIdleTimer();
    callback();
  }

  /**
   * Quiet is only quiet when lines can reach this stage. While the stages after it are held back (the
   * spool cannot write), lines wait in the buffers before it, so the timer starts again instead of
   * cutting a slip short; the lines that were held reset it as usual once they come through.
   */
  private armIdleTimer(): void {
    if (this.quietMs === undefined || !this.grouper.holding) return;
    this.idleTimer = setTimeout(() => {
      this.idleTimer = undefined;
      if (this.heldBack()) {
        this.armIdleTimer();
        return;
      }
      for (const output of this.grouper.quiet()) this.push(output);
    }, this.quietMs);
  }

  /** A line is waiting to be taken, or what was pushed is not being read. */
  private heldBack(): boolean {
    return this.writableLength > 0 || this.readableLength >= this.readableHighWaterMark;
  }

  override _flush(callback: TransformCallback): void {
    this.clearIdleTimer();
    for (const output of this.grouper.end()) this.push(output);
    callback();
  }

  override _destroy(error: Error | null, callback: (error?: Error | null) => void): void {
    this.clearIdleTimer();
    callback(error);
  }

  private clearIdleTimer(): void {
    if (this.idleTimer) clearTimeout(this.idleTimer);
    this.idleTimer = undefined;
  }
}

/** A /g or /y pattern remembers lastIndex between test() calls; profiles must not depend on that. */
function withoutState(pattern: LineTest): LineTest {
  return pattern instanceof RegExp ? new RegExp(pattern.source, pattern.flags.replace(/[gy]/g, '')) : pattern;
}

export function rawOf(lines: readonly Line[]): string {
  return lines.map((line) => line.raw).join('');
}

function charsOf(lines: readonly Line[]): number {
  return lines.reduce((sum, line) => sum + line.raw.length, 0);
}
