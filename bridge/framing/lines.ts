import { Transform, type TransformCallback } from 'node:stream';

export type LineEncoding = 'utf8' | 'latin1';
export const LINE_ENCODINGS: readonly LineEncoding[] = ['utf8', 'latin1'];

/** One printed line. `raw` is exactly what came down the cable, line ending included. */
export interface Line {
  /** The line without its line ending (LF, CRLF, CR or form feed); only parsing uses this. */
  text: string;
  raw: string;
  /** The line ran past the length bound: this is one piece of it, ending where it was cut. */
  overlong: boolean;
}

export interface LineSplitterOptions {
  encoding?: LineEncoding;
  /** Longest line kept in one piece, in bytes, line ending not counted. */
  maxLineBytes?: number;
  /**
   * A chunk that ends in CR may be a CR-only line end or the first half of CRLF. The line is held
   * for the next byte; on a live link it is released after this long (a CR-only printer's last line).
   */
  releaseCrAfterMs?: number;
}

export const DEFAULT_MAX_LINE_BYTES = 4096;
const LF = 0x0a;
const CR = 0x0d;
const FF = 0x0c;

/**
 * Bytes → lines, synchronously. A line ends at LF, CRLF, a lone CR or a form feed (kept in raw, so
 * raw stays exact). Output depends only on the bytes, never on how they were chunked: an overlong
 * line is cut into pieces counted from its start whether it arrived whole or in parts.
 */
export class LineCutter {
  /** Start of a line still waiting for its end (bounded by maxLineBytes). */
  buffer: Buffer = Buffer.alloc(0);
  /** buffer ends with a CR whose LF may still come. */
  private crHeld = false;
  private readonly encoding: LineEncoding;
  private readonly maxLineBytes: number;

  constructor(options: LineSplitterOptions = {}) {
    this.encoding = options.encoding ?? 'utf8';
    this.maxLineBytes = options.maxLineBytes ?? DEFAULT_MAX_LINE_BYTES;
    if (!Number.isInteger(this.maxLineBytes) || this.maxLineBytes < 16) {
      throw new RangeError('maxLineBytes must be an integer of at least 16');
    }
  }

  get holdingCr(): boolean {
    return this.crHeld;
  }

  push(chunk: Buffer): Line[] {
    const out: Line[] = [];
    if (chunk.length === 0) return out;
    const data = this.buffer.length ? Buffer.concat([this.buffer, chunk]) : chunk;
    let start = 0;
    let at = this.buffer.length;
    if (this.crHeld) {
      this.crHeld = false;
      const end = data[at] === LF ? at + 1 : at;
      this.emit(data.subarray(0, end), out);
      start = at = end;
    }
    for (; at < data.length; at++) {
      const byte = data[at];
      if (byte === LF || byte === FF) {
        this.emit(data.subarray(start, at + 1), out);
        start = at + 1;
      } else if (byte === CR) {
        if (at + 1 === data.length) {
          this.crHeld = true;
          break;
        }
        const end = data[at + 1] === LF ? at + 2 : at + 1;
        this.emit(data.subarray(start, end), out);
        start = end;
        at = end - 1;
      }
    }
    let rest = data.subarray(start);
    // What is left is the start of a line; cut it at the bound as a whole line would be cut.
    while (rest.length - (this.crHeld ? 1 : 0) > this.maxLineBytes) {
      const cut = this.cutPoint(rest);
      out.push(this.toLine(rest.subarray(0, cut), true));
      rest = rest.subarray(cut);
    }
    this.buffer = Buffer.from(rest);
    return out;
  }

  /** The input ended (or, for a held CR, went quiet): what is held is a line. */
  end(): Line[] {
    const out: Line[] = [];
    if (this.buffer.length > 0) this.emit(this.buffer, out);
    this.buffer = Buffer.alloc(0);
    this.crHeld = false;
    return out;
  }

  private emit(bytes: Buffer, out: Line[]): void {
    let rest = bytes;
    while (rest.length - endingLength(rest) > this.maxLineBytes) {
      const cut = this.cutPoint(rest);
      out.push(this.toLine(rest.subarray(0, cut), true));
      rest = rest.subarray(cut);
    }
    if (rest.length > 0) out.push(this.toLine(rest, false));
  }

  /** Cut at the bound, moved back so a UTF-8 character is not split in two. */
  private cutPoint(bytes: Buffer): number {
    let cut = this.maxLineBytes;
    if (this.encoding === 'utf8') {
      while (cut > 0 && (bytes[cut] & 0xc0) === 0x80) cut--;
      if (cut === 0) cut = this.maxLineBytes;
    }
    return cut;
  }

  private toLine(bytes: Buffer, overlong: boolean): Line {
    const raw = bytes.toString(this.encoding);
    return { raw, text: overlong ? raw : lineText(raw), overlong };
  }
}

/** Stream stage around LineCutter: bytes in, Line objects out. */
export class LineSplitter extends Transform {
  private readonly cutter: LineCutter;
  private readonly releaseCrAfterMs: number | undefined;
  private crTimer: NodeJS.Timeout | undefined;
  /** This link has ended a line with a lone CR before: a trailing CR is a line end, not half of CRLF. */
  private crOnly = false;

  constructor(options: LineSplitterOptions = {}) {
    super({ readableObjectMode: true });
    this.cutter = new LineCutter(options);
    this.releaseCrAfterMs = options.releaseCrAfterMs;
  }

  /** Bytes held while waiting for a line end. */
  get buffer(): Buffer {
    return this.cutter.buffer;
  }

  override _transform(chunk: Buffer, _encoding: BufferEncoding, callback: TransformCallback): void {
    this.clearTimer();
    for (const line of this.cutter.push(chunk)) this.emitLine(line);
    // Live links only: once the printer has shown it ends lines with CR alone, its last line (often a
    // record's end line) goes on at once instead of after the quiet time. Should an LF still follow,
    // it becomes a blank line of its own: raw stays exact, and blank lines are spacing.
    if (this.cutter.holdingCr && this.releaseCrAfterMs !== undefined && this.crOnly) {
      for (const line of this.cutter.end()) this.emitLine(line);
    } else if (this.cutter.holdingCr && this.releaseCrAfterMs !== undefined) {
      this.crTimer = setTimeout(() => {
        this.crTimer = undefined;
        for (const line of this.cutter.end()) this.emitLine(line);
      }, this.releaseCrAfterMs);
    }
    callback();
  }

  override _flush(callback: TransformCallback): void {
    this.clearTimer();
    for (const line of this.cutter.end()) this.push(line);
    callback();
  }

  override _destroy(error: Error | null, callback: (error?: Error | null) => void): void {
    this.clearTimer();
    callback(error);
  }

  private emitLine(line: Line): void {
    if (line.raw.endsWith('\r')) this.crOnly = true;
    else if (line.raw.endsWith('\r\n')) this.crOnly = false;
    this.push(line);
  }

  private clearTimer(): void {
    if (this.crTimer) clearTimeout(this.crTimer);
    this.crTimer = undefined;
  }
}

function endingLength(bytes: Buffer): number {
  const last = bytes[bytes.length - 1];
  if (last === FF || last === CR) return 1;
  if (last === LF) return bytes.length > 1 && bytes[bytes.length - 2] === CR ? 2 : 1;
  return 0;
}

/** Text of a raw line without its line ending: LF, CRLF, a lone CR or a form feed. */
export function lineText(raw: string): string {
  if (raw.endsWith('\f')) return raw.slice(0, -1);
  if (raw.endsWith('\r\n')) return raw.slice(0, -2);
  if (raw.endsWith('\n') || raw.endsWith('\r')) return raw.slice(0, -1);
  return raw;
}
