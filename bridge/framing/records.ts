import { Transform, type TransformCallback } from 'node:stream';
import type { UnparsedFragment } from '../../lib/validation/readings';
import type { Line } from './lines';
import { fragment } from '../fragments';

/** Lines from a start line through an end line, as printed. */
export interface RecordFrame {
  kind: 'record';
  lines: Line[];
  /** The exact text of all its lines, line endings included. */
  raw: string;
}

export type FramerOutput = RecordFrame | UnparsedFragment;

/** How one printout format marks its records; plain data so it can come from a stored profile. */
export interface RecordFraming {
  start: RegExp;
  end: RegExp;
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
 * Line → record framer. Stray non-blank lines between records are kept together as one unparsed
 * fragment; a record that never reaches its end line becomes an unparsed fragment saying why.
 * Whitespace-only lines outside records are paper spacing and produce nothing.
 */
export class RecordFramer extends Transform {
  private readonly startPattern: RegExp;
  private readonly endPattern: RegExp;
  private readonly maxLines: number;
  private readonly maxChars: number;
  private readonly idleMs: number | undefined;
  private record: Line[] | null = null;
  private stray: Line[] = [];
  /** Blank lines after stray text: kept only if more stray text follows, so raw stays exact. */
  private blanksAfterStray: Line[] = [];
  private idleTimer: NodeJS.Timeout | undefined;

  constructor(framing: RecordFraming) {
    super({ objectMode: true });
    this.startPattern = withoutState(framing.start);
    this.endPattern = withoutState(framing.end);
    this.maxLines = framing.maxLines;
    this.maxChars = framing.maxChars ?? DEFAULT_MAX_CHARS;
    this.idleMs = framing.idleMs;
    if (!Number.isInteger(this.maxLines) || this.maxLines < 1) throw new RangeError('maxLines must be a positive integer');
    if (this.idleMs !== undefined && !(this.idleMs > 0)) throw new RangeError('idleMs must be positive');
  }

  override _transform(line: Line, _encoding: BufferEncoding, callback: TransformCallback): void {
    this.takeLine(line);
    this.armIdleTimer();
    callback();
  }

  override _flush(callback: TransformCallback): void {
    this.clearIdleTimer();
    this.giveUpRecord('record cut short: input ended before the end line');
    this.flushStray();
    callback();
  }

  override _destroy(error: Error | null, callback: (error?: Error | null) => void): void {
    this.clearIdleTimer();
    callback(error);
  }

  private takeLine(line: Line): void {
    if (this.record) {
      if (this.record.length >= this.maxLines) {
        this.giveUpRecord(`record cut short: more than ${this.maxLines} lines without an end line`);
      } else if (charsOf(this.record) + line.raw.length > this.maxChars) {
        this.giveUpRecord(`record cut short: more than ${this.maxChars} characters without an end line`);
      } else if (this.startPattern.test(line.text)) {
        this.giveUpRecord('record cut short: a new record started before the end line');
      } else {
        this.record.push(line);
        if (this.endPattern.test(line.text)) this.emitRecord();
        return;
      }
    }
    if (this.startPattern.test(line.text)) {
      this.flushStray();
      this.record = [line];
      if (this.endPattern.test(line.text)) this.emitRecord();
      return;
    }
    if (line.text.trim() === '') {
      if (this.stray.length === 0) return;
      // A long run of blank lines ends the stray text; the blanks themselves are spacing.
      if (this.blanksAfterStray.length >= this.maxLines) this.flushStray();
      else this.blanksAfterStray.push(line);
      return;
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
  }

  private emitRecord(): void {
    const lines = this.record ?? [];
    this.record = null;
    this.push({ kind: 'record', lines, raw: rawOf(lines) } satisfies RecordFrame);
  }

  private giveUpRecord(reason: string): void {
    if (!this.record) return;
    const raw = rawOf(this.record);
    this.record = null;
    this.push(fragment(raw, reason));
  }

  private flushStray(): void {
    this.blanksAfterStray = [];
    if (this.stray.length === 0) return;
    const raw = rawOf(this.stray);
    this.stray = [];
    this.push(fragment(raw, OUTSIDE_RECORD));
  }

  private armIdleTimer(): void {
    this.clearIdleTimer();
    if (this.idleMs === undefined || (!this.record && this.stray.length === 0)) return;
    this.idleTimer = setTimeout(() => {
      this.idleTimer = undefined;
      this.giveUpRecord(`record cut short: no end line within ${Math.round((this.idleMs ?? 0) / 100) / 10} s`);
      this.flushStray();
    }, this.idleMs);
  }

  private clearIdleTimer(): void {
    if (this.idleTimer) clearTimeout(this.idleTimer);
    this.idleTimer = undefined;
  }
}

/** A /g or /y pattern remembers lastIndex between test() calls; profiles must not depend on that. */
function withoutState(pattern: RegExp): RegExp {
  return new RegExp(pattern.source, pattern.flags.replace(/[gy]/g, ''));
}

function rawOf(lines: readonly Line[]): string {
  return lines.map((line) => line.raw).join('');
}

function charsOf(lines: readonly Line[]): number {
  return lines.reduce((sum, line) => sum + line.raw.length, 0);
}
