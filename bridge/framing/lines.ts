import { ReadlineParser } from '@serialport/parser-readline';
import type { TransformCallback } from 'node:stream';

export type LineEncoding = 'utf8' | 'latin1';
export const LINE_ENCODINGS: readonly LineEncoding[] = ['utf8', 'latin1'];

/** One printed line. `raw` is exactly what came down the cable, line ending included. */
export interface Line {
  /** The line without its line ending (LF, and a CR before it); only parsing uses this. */
  text: string;
  raw: string;
  /** The line ran past the length bound: this is one piece of it, ending where it was cut. */
  overlong: boolean;
}

export interface LineSplitterOptions {
  encoding?: LineEncoding;
  /** Longest line kept in one piece, in bytes, line ending not counted. */
  maxLineBytes?: number;
}

export const DEFAULT_MAX_LINE_BYTES = 4096;
const LF = 0x0a;

/**
 * Bytes → Line objects. Splitting is ReadlineParser's own (delimiter LF, delimiter kept so raw stays
 * exact); this subclass only decodes each line and bounds its length, so a device that never sends
 * LF cannot grow the buffer without limit. Output depends only on the bytes, never on how they were
 * chunked: a piece is cut from the start of a line whether the line arrived whole or in parts.
 */
export class LineSplitter extends ReadlineParser {
  private readonly lineEncoding: LineEncoding;
  private readonly maxLineBytes: number;

  constructor(options: LineSplitterOptions = {}) {
    // encoding undefined: ReadlineParser would otherwise decode its output to strings; lines are decoded here.
    super({ delimiter: Buffer.from('\n'), includeDelimiter: true, encoding: undefined, readableObjectMode: true });
    this.lineEncoding = options.encoding ?? 'utf8';
    this.maxLineBytes = options.maxLineBytes ?? DEFAULT_MAX_LINE_BYTES;
    if (!Number.isInteger(this.maxLineBytes) || this.maxLineBytes < 16) {
      throw new RangeError('maxLineBytes must be an integer of at least 16');
    }
  }

  override _transform(chunk: Buffer, encoding: BufferEncoding, callback: TransformCallback): void {
    super._transform(chunk, encoding, (error) => {
      // What is left is the start of a line still waiting for its LF.
      while (!error && this.buffer.length > this.maxLineBytes) {
        const cut = this.cutPoint(this.buffer);
        super.push(this.toLine(this.buffer.subarray(0, cut), true));
        this.buffer = this.buffer.subarray(cut);
      }
      callback(error);
    });
  }

  /** DelimiterParser pushes Buffers (each line, then the unterminated tail at the end); decode them here. */
  override push(chunk: unknown, encoding?: BufferEncoding): boolean {
    if (!Buffer.isBuffer(chunk)) return super.push(chunk, encoding);
    let rest = chunk;
    let more = true;
    while (contentLength(rest) > this.maxLineBytes) {
      const cut = this.cutPoint(rest);
      more = super.push(this.toLine(rest.subarray(0, cut), true));
      rest = rest.subarray(cut);
    }
    // An empty tail at end of stream is not a line.
    if (rest.length > 0) more = super.push(this.toLine(rest, false));
    return more;
  }

  /** Cut at the bound, moved back so a UTF-8 character is not split in two. */
  private cutPoint(bytes: Buffer): number {
    let cut = this.maxLineBytes;
    if (this.lineEncoding === 'utf8') {
      while (cut > 0 && (bytes[cut] & 0xc0) === 0x80) cut--;
      if (cut === 0) cut = this.maxLineBytes;
    }
    return cut;
  }

  private toLine(bytes: Buffer, overlong: boolean): Line {
    const raw = bytes.toString(this.lineEncoding);
    return { raw, text: lineText(raw), overlong };
  }
}

function contentLength(bytes: Buffer): number {
  return bytes.length > 0 && bytes[bytes.length - 1] === LF ? bytes.length - 1 : bytes.length;
}

/** Text of a raw line without its LF and the CR printers send before it. */
export function lineText(raw: string): string {
  const withoutLf = raw.endsWith('\n') ? raw.slice(0, -1) : raw;
  return withoutLf.endsWith('\r') ? withoutLf.slice(0, -1) : withoutLf;
}
