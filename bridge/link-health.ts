import { isoWithOffset } from './local-time';
import type { LineEncoding } from './framing/lines';

export interface LinkHealthOptions {
  /** Protocol control bytes that are normal on this link (ASTM STX/ETX…, MLLP VT/FS). */
  controlBytes?: readonly number[];
  encoding?: LineEncoding;
  /** Bytes judged at a time (the most recent ones). */
  windowBytes?: number;
  /** No verdict on fewer bytes than this. */
  minBytes?: number;
  /** Share of unreadable bytes from which the warning shows. */
  threshold?: number;
  /** How long a protocol problem stays in the warnings. */
  problemMs?: number;
  now?: () => Date;
}

const TEXT_CONTROLS = new Set([0x09, 0x0a, 0x0c, 0x0d]);

/**
 * Watches an instrument's bytes for signs of a wrong line setting. Text at the wrong baud rate or
 * parity arrives as control characters and bytes above 0x7F (a wrong parity bit sets the top bit of
 * about half the characters); a protocol's own control characters and valid UTF-8 are normal.
 */
export class LinkHealth {
  private readonly ring: Uint8Array;
  private at = 0;
  private filled = 0;
  private unreadable = 0;
  private received = 0;
  private lastByte: Date | undefined;
  private continuation = 0;
  private readonly controls: Set<number>;
  private readonly problems: { at: number; message: string }[] = [];
  private checksumRetransmissions = 0;
  private framingErrors = 0;
  private readonly now: () => Date;

  constructor(private readonly options: LinkHealthOptions = {}) {
    this.ring = new Uint8Array(options.windowBytes ?? 2048);
    this.controls = new Set([...TEXT_CONTROLS, ...(options.controlBytes ?? [])]);
    this.now = options.now ?? (() => new Date());
  }

  observe(chunk: Buffer): void {
    if (chunk.length === 0) return;
    this.received += chunk.length;
    this.lastByte = this.now();
    const utf8 = (this.options.encoding ?? 'utf8') === 'utf8';
    for (const byte of chunk) {
      let bad: boolean;
      if (byte < 0x20 || byte === 0x7f) bad = !this.controls.has(byte);
      else if (byte < 0x80) bad = false;
      else if (utf8 && this.continuation > 0 && (byte & 0xc0) === 0x80) bad = false;
      else if (utf8 && byte >= 0xc2 && byte <= 0xf4) bad = false;
      else bad = true;
      if (utf8) this.continuation = byte >= 0xc2 && byte <= 0xf4 ? (byte >= 0xf0 ? 3 : byte >= 0xe0 ? 2 : 1) : (byte & 0xc0) === 0x80 && this.continuation > 0 ? this.continuation - 1 : 0;
      this.push(bad);
    }
  }

  /** A protocol problem (a NAKed frame, an abandoned session) for the warnings. */
  note(message: string): void {
    // Counted for the instruments page: a bad checksum makes the sender repeat the frame (E1381 NAK);
    // any other broken frame (no CR LF, out of sequence, cut off, too long) is a framing error.
    if (/checksum \S+ is wrong/i.test(message)) this.checksumRetransmissions++;
    else if (/frame|EOT in the middle/i.test(message)) this.framingErrors++;
    this.problems.push({ at: this.now().getTime(), message });
    if (this.problems.length > 100) this.problems.shift();
  }

  /** Share of unreadable bytes in the window, or undefined while too few bytes have come. */
  unreadableShare(): number | undefined {
    return this.filled < (this.options.minBytes ?? 256) ? undefined : this.unreadable / this.filled;
  }

  status(): { warnings: string[]; bytesReceived: number; lastByteAt?: string; checksumRetransmissions: number; framingErrors: number } {
    const warnings: string[] = [];
    const share = this.unreadableShare();
    if (share !== undefined && share >= (this.options.threshold ?? 0.2)) {
      warnings.push(`looks like the wrong baud rate or parity (${Math.round(share * 100)}% unreadable bytes)`);
    }
    const since = this.now().getTime() - (this.options.problemMs ?? 15 * 60_000);
    const recent = this.problems.filter((p) => p.at >= since);
    if (recent.length > 0) {
      const last = recent[recent.length - 1].message;
      warnings.push(`${recent.length} protocol problem(s) in the last ${Math.round((this.options.problemMs ?? 15 * 60_000) / 60_000)} min, last: ${last}`.slice(0, 200));
    }
    return {
      warnings,
      bytesReceived: this.received,
      checksumRetransmissions: this.checksumRetransmissions,
      framingErrors: this.framingErrors,
      ...(this.lastByte ? { lastByteAt: isoWithOffset(this.lastByte) } : {}),
    };
  }

  private push(bad: boolean): void {
    if (this.filled === this.ring.length) this.unreadable -= this.ring[this.at];
    else this.filled++;
    this.ring[this.at] = bad ? 1 : 0;
    if (bad) this.unreadable++;
    this.at = (this.at + 1) % this.ring.length;
  }
}
