import { Transform, type TransformCallback } from 'node:stream';
import { fragment, fragments } from '../fragments';
import type { Line, LineEncoding } from './lines';
import type { FramerOutput, RecordFrame } from './records';

// MLLP (HL7 v2 minimal lower layer protocol, as HL7's implementation guide describes it, from memory):
// each message is sent as <VT> message <FS><CR>, VT = 0x0B, FS = 0x1C.

export const VT = 0x0b;
export const FS = 0x1c;
const CR = 0x0d;
export const MLLP_CONTROL_BYTES: readonly number[] = [VT, FS];
export const MAX_MESSAGE_BYTES = 1024 * 1024;
const MAX_STRAY_BYTES = 4096;

/** A message in its MLLP envelope. */
export function mllpWrap(message: string | Buffer, encoding: LineEncoding = 'utf8'): Buffer {
  return Buffer.concat([Buffer.from([VT]), typeof message === 'string' ? Buffer.from(message, encoding) : message, Buffer.from([FS, CR])]);
}

/** HL7 segments end at CR; LF and CRLF are accepted from lax senders. */
export function segmentsOf(text: string): Line[] {
  const lines: Line[] = [];
  const pattern = /[^\r\n]*(?:\r\n|\r|\n|$)/g;
  for (const match of text.matchAll(pattern)) {
    const raw = match[0];
    if (raw === '') break;
    const segment = raw.replace(/[\r\n]+$/, '');
    if (segment.trim() === '') continue;
    lines.push({ raw, text: segment, overlong: false });
  }
  return lines;
}

/**
 * Bytes → messages, synchronously: VT … FS CR becomes a RecordFrame whose lines are the segments.
 * Bytes outside an envelope, and a message broken off by a new VT, become fragments.
 */
export class MllpCutter {
  private inMessage = false;
  private afterFs = false;
  private message: Buffer[] = [];
  private size = 0;
  private stray: number[] = [];
  private out: FramerOutput[] = [];

  /** `followCharset`: decode each message as its MSH-18 says (else `encoding`); off when a person chose the encoding. */
  constructor(
    private readonly encoding: LineEncoding = 'utf8',
    private readonly followCharset = false,
  ) {}

  push(chunk: Buffer): FramerOutput[] {
    let from = 0;
    for (let at = 0; at < chunk.length; at++) {
      const byte = chunk[at];
      if (this.afterFs) {
        this.afterFs = false;
        // The CR after FS is the envelope's own.
        if (byte === CR) {
          from = at + 1;
          continue;
        }
      }
      if (!this.inMessage) {
        if (byte === VT) {
          this.flushStray();
          this.inMessage = true;
          from = at + 1;
        } else {
          this.stray.push(byte);
          if (this.stray.length >= MAX_STRAY_BYTES) this.flushStray();
        }
        continue;
      }
      if (byte === VT || byte === FS) {
        this.add(chunk.subarray(from, at));
        if (byte === VT) this.closeMessage('message cut short: a new message (VT) began before FS');
        else this.closeMessage();
        this.inMessage = byte === VT;
        this.afterFs = byte === FS;
        from = at + 1;
      }
    }
    if (this.inMessage) this.add(chunk.subarray(from));
    return this.drain();
  }

  end(): FramerOutput[] {
    if (this.inMessage) this.closeMessage('message cut short: input ended before FS');
    this.inMessage = false;
    this.flushStray();
    return this.drain();
  }

  private add(bytes: Buffer): void {
    if (bytes.length === 0) return;
    this.message.push(Buffer.from(bytes));
    this.size += bytes.length;
    if (this.size > MAX_MESSAGE_BYTES) {
      // Bounded: keep what came as fragments and go on with the rest as another piece.
      this.out.push(...fragments(this.takeMessage(), `message longer than ${MAX_MESSAGE_BYTES} bytes`));
    }
  }

  private takeMessage(): string {
    const bytes = Buffer.concat(this.message);
    const text = bytes.toString((this.followCharset && charsetOf(bytes)) || this.encoding);
    this.message = [];
    this.size = 0;
    return text;
  }

  private closeMessage(cutShort?: string): void {
    const text = this.takeMessage();
    if (text.trim() === '') return;
    if (cutShort) {
      this.out.push(...fragments(text, cutShort));
      return;
    }
    const lines = segmentsOf(text);
    // raw is the message exactly as sent (segment separators included), not the segments re-joined.
    this.out.push({ kind: 'record', lines, raw: text } satisfies RecordFrame);
  }

  private flushStray(): void {
    const bytes = Buffer.from(this.stray);
    this.stray = [];
    // CR/LF and spaces between envelopes are spacing some senders add.
    if (bytes.toString('latin1').trim() === '') return;
    this.out.push(fragment(bytes.toString(this.encoding), 'bytes outside an MLLP message (VT … FS CR)'));
  }

  private drain(): FramerOutput[] {
    const out = this.out;
    this.out = [];
    return out;
  }
}

// MSH-18 character set (HL7 table 0211, from memory): empty or ASCII is 7-bit ASCII, 8859/1 is
// ISO 8859-1, UNICODE UTF-8 is UTF-8. Others (8859/2…, ISO IR87, UNICODE UTF-16…) are not decoded here:
// the instrument's default stands, and a wrong byte shows as U+FFFD rather than as another letter.
const CHARSETS: Record<string, LineEncoding> = { ASCII: 'latin1', '8859/1': 'latin1', 'UNICODE UTF-8': 'utf8', 'UTF-8': 'utf8' };

/** The encoding a message's MSH-18 names (the first repetition), or null when it names none we decode. */
export function charsetOf(message: Buffer): LineEncoding | null {
  // MSH and its separators are ASCII in every character set HL7 allows here, so latin1 reads them.
  const head = message.subarray(0, 2048).toString('latin1');
  // In a batch (FHS, BHS …) the first MSH says it for the batch's messages.
  const msh = head.split(/[\r\n]+/).find((line) => line.startsWith('MSH')) ?? '';
  if (msh.length < 8) return null;
  const field = msh[3];
  const repetition = msh[5];
  const value = (msh.split(field)[17] ?? '').split(repetition)[0].trim().toUpperCase();
  if (value === '') return null;
  return CHARSETS[value] ?? null;
}

/** Stream stage around MllpCutter. */
export class MllpFramer extends Transform {
  private readonly cutter: MllpCutter;

  constructor(options: { encoding?: LineEncoding; followCharset?: boolean } = {}) {
    super({ readableObjectMode: true });
    this.cutter = new MllpCutter(options.encoding, options.followCharset);
  }

  override _transform(chunk: Buffer, _encoding: BufferEncoding, callback: TransformCallback): void {
    for (const output of this.cutter.push(chunk)) this.push(output);
    callback();
  }

  override _flush(callback: TransformCallback): void {
    for (const output of this.cutter.end()) this.push(output);
    callback();
  }
}
