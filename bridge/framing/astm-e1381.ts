import { Transform, type TransformCallback } from 'node:stream';
import type { UnparsedFragment } from '../../lib/validation/readings';
import type { Reply } from '../dialects/dialect';
import { fragment, fragments } from '../fragments';
import type { LineEncoding } from './lines';
import { silentLog, type Log } from '../log';

// ASTM E1381 / CLSI LIS1-A low-level protocol, written from our reading of the standard (clause
// numbers from memory): establishment (ENQ → ACK/NAK), transfer of frames
// <STX> FN text <ETB|ETX> C1 C2 <CR> <LF> with FN 1..7,0,1.., checksum = sum of the bytes from FN
// through ETB/ETX modulo 256 as two upper-case hex digits, termination (EOT).
// Corners, as the standard's text reads to us (from memory):
// - Neutral state: the receiver leaves it only on ENQ (data link layer state diagram: Idle → "receive
//   ENQ" → Awake; nothing else moves it). A frame sent without ENQ is therefore neither ACKed nor NAKed
//   nor read: its bytes go up as an unparsed fragment, so nothing is lost without trace.
// - A frame is rejected (NAK) when its checksum is wrong or its number is neither the last accepted
//   one nor one higher modulo 8 ("receiver requirements"); a repeat of the last accepted one is ACKed
//   and kept once. On a live link the sender repeats a NAKed frame. In a file replay nobody can ask
//   for it again, so a jump in frame numbers is reported as a gap (see AstmLinkOutput 'gap').

export const STX = 0x02;
export const ETX = 0x03;
export const EOT = 0x04;
export const ENQ = 0x05;
export const ACK = 0x06;
export const LF = 0x0a;
export const CR = 0x0d;
export const NAK = 0x15;
export const ETB = 0x17;

export const ASTM_CONTROL_BYTES: readonly number[] = [STX, ETX, EOT, ENQ, ACK, NAK, ETB];

/** Receiver waits this long for a frame or EOT after its ACK/NAK (LIS1-A timeouts, from memory: 30 s). */
export const RECEIVER_TIMEOUT_MS = 30_000;
/** Sender waits this long for ACK/NAK after ENQ or a frame (from memory: 15 s). */
export const SENDER_TIMEOUT_MS = 15_000;
/** A frame is refused after this many NAKs; the sender then ends with EOT (from memory: 6). */
export const MAX_RETRANSMISSIONS = 6;
/** Frame text per frame; longer text continues in the next frame after ETB (from memory: 240). */
export const MAX_FRAME_TEXT = 240;
// Far above the standard's 247-character frame, so a lax sender still gets through, but bounded.
const MAX_FRAME_BYTES = 64 * 1024;
const MAX_STRAY_BYTES = 4096;
/** ETB frames waiting for their ETX frame are bounded too. */
const MAX_PENDING_BYTES = 1024 * 1024;

/** What the link layer hands up: the text of complete messages (frames joined), session ends, noise. */
export type AstmLinkOutput =
  | { kind: 'text'; text: string }
  | { kind: 'session-end'; abandoned?: string; partial?: string }
  /**
   * Frames are missing (replay only): `partial` holds the text received since the last complete
   * message part (ETB frames, frames refused and never repeated); what follows the gap is text again,
   * but the message it belongs to cannot be trusted whole.
   */
  | { kind: 'gap'; reason: string; partial: string }
  | UnparsedFragment;

/** Why a frame was refused: a wrong checksum (or a broken-off frame) is superseded by the next good frame. */
type Refused = { number: number; text: Buffer; why: 'damaged' | 'sequence' };

/** Two upper-case hex digits: sum of the bytes modulo 256 (E1381 checksum). */
export function astmChecksum(bytes: Uint8Array): string {
  let sum = 0;
  for (const byte of bytes) sum = (sum + byte) & 0xff;
  return sum.toString(16).toUpperCase().padStart(2, '0');
}

/** One frame, checksum included. */
export function astmFrame(number: number, text: Buffer, last: boolean): Buffer {
  const body = Buffer.concat([Buffer.from(String(number % 8)), text, Buffer.from([last ? ETX : ETB])]);
  return Buffer.concat([Buffer.from([STX]), body, Buffer.from(`${astmChecksum(body)}\r\n`, 'latin1')]);
}

/** A message as frames: each record in its own frame, split after MAX_FRAME_TEXT bytes with ETB. */
export function astmFrames(records: readonly string[], encoding: LineEncoding = 'latin1'): Buffer[] {
  const frames: Buffer[] = [];
  for (const record of records) {
    const bytes = Buffer.from(record.endsWith('\r') ? record : `${record}\r`, encoding);
    for (let at = 0; at < bytes.length; at += MAX_FRAME_TEXT) {
      const end = Math.min(at + MAX_FRAME_TEXT, bytes.length);
      frames.push(astmFrame(frames.length + 1, bytes.subarray(at, end), end === bytes.length));
    }
  }
  return frames;
}

type State = 'neutral' | 'receiving' | 'frame' | 'await-enq-reply' | 'await-frame-reply';
type FramePart = 'body' | 'c1' | 'c2' | 'cr' | 'lf';

export interface AstmLinkOptions {
  emit(output: AstmLinkOutput): void;
  /** Back channel; without one the link only listens (file replay) and accepts frames unanswered. */
  reply?: Reply;
  encoding?: LineEncoding;
  log?: Log;
  name?: string;
  /** A protocol problem worth telling a person about (link health). */
  onProblem?(message: string): void;
  /** True while what was received cannot be taken yet (the spool is behind): ENQ is answered NAK. */
  busy?(): boolean;
}

/**
 * Both ends of E1381 on one link, without timers: receives the instrument's sessions (ACK good frames,
 * NAK bad checksums and out-of-sequence frames, join ETB frames, EOT ends) and, between them, sends
 * our own queued messages (answers to host queries). The caller calls timeout() when wait() runs out.
 */
export class AstmLink {
  private state: State = 'neutral';
  private part: FramePart = 'body';
  private body: number[] = [];
  private checksum = '';
  /** Number of the last frame accepted in this session; none before the first. */
  private lastFrameNumber: number | undefined;
  /** Text of ETB frames waiting for their ETX frame. */
  private pending: Buffer[] = [];
  /** Text of this session's complete messages, for a report if it is abandoned. */
  private sessionText = '';
  /** Frames refused in this session and not yet received good: kept, so a session that ends without them loses nothing. */
  private refused: Refused[] = [];
  private stray: number[] = [];
  private readonly outbox: Buffer[][] = [];
  private sending: { frames: Buffer[]; index: number; tries: number } | undefined;
  private readonly log: Log;
  private readonly encoding: LineEncoding;

  constructor(private readonly options: AstmLinkOptions) {
    this.log = options.log ?? silentLog;
    this.encoding = options.encoding ?? 'latin1';
  }

  /** How long the link may stay quiet in this state before timeout() is due; none in neutral. */
  wait(): number | undefined {
    if (this.state === 'receiving' || this.state === 'frame') return RECEIVER_TIMEOUT_MS;
    if (this.state === 'await-enq-reply' || this.state === 'await-frame-reply') return SENDER_TIMEOUT_MS;
    return undefined;
  }

  get holdingStray(): boolean {
    return this.stray.length > 0;
  }

  /** Queue a message of ours; false when there is no back channel to send it on. */
  send(records: readonly string[]): boolean {
    if (!this.options.reply) return false;
    this.outbox.push(astmFrames(records, this.encoding));
    this.startSending();
    return true;
  }

  receive(chunk: Buffer): void {
    for (const byte of chunk) this.byte(byte);
  }

  timeout(): void {
    switch (this.state) {
      case 'receiving':
      case 'frame':
        this.problem(`no frame or EOT within ${RECEIVER_TIMEOUT_MS / 1000} s; session abandoned (E1381 receiver timeout)`);
        this.abandon(`session abandoned: no frame or EOT within ${RECEIVER_TIMEOUT_MS / 1000} s`);
        break;
      case 'await-enq-reply':
      case 'await-frame-reply':
        this.problem(`no reply within ${SENDER_TIMEOUT_MS / 1000} s to our ${this.state === 'await-enq-reply' ? 'ENQ' : 'frame'}; ending with EOT`);
        this.finishSending(false);
        break;
      default:
        break;
    }
    this.flushStray();
  }

  /** Quiet line in neutral: stray bytes held so far go up as a fragment. */
  flushStray(): void {
    if (this.stray.length === 0) return;
    const frameWithoutEnq = this.stray.includes(STX) && this.state === 'neutral';
    const raw = Buffer.from(this.stray).toString('latin1');
    this.stray = [];
    this.options.emit(
      fragment(raw, frameWithoutEnq ? 'bytes outside an ASTM session: a frame sent without ENQ first, not accepted (E1381: only ENQ opens a session)' : 'bytes outside an ASTM session'),
    );
  }

  /** Input ended: an open session is abandoned, held bytes go up. */
  end(): void {
    if (this.state === 'receiving' || this.state === 'frame') this.abandon('session cut short: input ended before EOT');
    this.flushStray();
  }

  private byte(byte: number): void {
    switch (this.state) {
      case 'neutral':
        return this.neutral(byte);
      case 'receiving':
        return this.betweenFrames(byte);
      case 'frame':
        return this.inFrame(byte);
      case 'await-enq-reply':
      case 'await-frame-reply':
        return this.awaitingReply(byte);
    }
  }

  private neutral(byte: number): void {
    if (byte === ENQ) {
      this.flushStray();
      // LIS1-A: a receiver that cannot take a message answers ENQ with NAK; the sender tries later.
      if (this.options.reply && this.options.busy?.()) {
        this.problem('not ready for a new message (the spool is behind); NAK to ENQ');
        this.reply(NAK);
        return;
      }
      this.openSession();
      return;
    }
    if (byte === STX && !this.stray.includes(STX)) {
      // A sender that skips ENQ (or a capture that starts mid-session): no answer, not read (see the top).
      this.flushStray();
      this.problem('a frame came without ENQ first; not answered and not read (kept as an unparsed fragment)');
    }
    if (byte === EOT && this.stray.length) {
      // The end of what was sent outside a session: it goes up with it.
      this.stray.push(byte);
      return this.flushStray();
    }
    // EOT, ACK, NAK in neutral are the end of something we already handled.
    if (byte === EOT || byte === ACK || byte === NAK) return;
    this.stray.push(byte);
    if (this.stray.length >= MAX_STRAY_BYTES) this.flushStray();
  }

  private openSession(): void {
    this.state = 'receiving';
    this.lastFrameNumber = undefined;
    this.pending = [];
    this.refused = [];
    this.sessionText = '';
    this.reply(ACK);
  }

  private betweenFrames(byte: number): void {
    if (byte === STX) return this.startFrame();
    if (byte === EOT) return this.closeSession();
    if (byte === ENQ) {
      // The sender gave up on this session and starts again.
      this.abandon('session cut short: the instrument started a new session before EOT');
      this.openSession();
      return;
    }
    // Line noise between frames: not part of any frame, kept for a person.
    this.stray.push(byte);
    if (this.stray.length >= MAX_STRAY_BYTES) this.flushStray();
  }

  private startFrame(): void {
    this.flushStray();
    this.state = 'frame';
    this.part = 'body';
    this.body = [];
    this.checksum = '';
  }

  private inFrame(byte: number): void {
    if (byte === STX) {
      this.problem('a frame was broken off by a new STX; waiting for it again');
      this.hold(Buffer.from(this.body), 'damaged');
      this.reply(NAK);
      return this.startFrame();
    }
    if (byte === EOT) {
      this.problem('EOT in the middle of a frame');
      return this.closeSession();
    }
    if (byte === ENQ) {
      this.abandon('session cut short: the instrument started a new session in the middle of a frame');
      return this.openSession();
    }
    switch (this.part) {
      case 'body':
        this.body.push(byte);
        if (byte === ETX || byte === ETB) this.part = 'c1';
        else if (this.body.length > MAX_FRAME_BYTES) this.rejectFrame(`a frame longer than ${MAX_FRAME_BYTES} bytes`);
        return;
      case 'c1':
      case 'c2':
        this.checksum += String.fromCharCode(byte);
        this.part = this.part === 'c1' ? 'c2' : 'cr';
        return;
      case 'cr':
        if (byte === CR) {
          this.part = 'lf';
          return;
        }
        return this.rejectFrame('a frame without CR LF after its checksum');
      case 'lf':
        if (byte !== LF) this.problem('a frame without LF after CR; read anyway');
        this.frameComplete();
        // A lax sender's next byte is not lost.
        if (byte !== LF) this.byte(byte);
        return;
    }
  }

  private frameComplete(): void {
    const body = Buffer.from(this.body);
    this.state = 'receiving';
    const numberChar = body[0];
    const number = numberChar - 0x30;
    const expected = ((this.lastFrameNumber ?? 0) + 1) % 8;
    if (astmChecksum(body) !== this.checksum.toUpperCase()) {
      this.hold(body, 'damaged');
      return this.rejectFrame(`frame ${String.fromCharCode(numberChar)}: checksum ${this.checksum} is wrong (sum gives ${astmChecksum(body)})`);
    }
    if (!(number >= 0 && number <= 7)) {
      this.hold(body, 'damaged');
      return this.rejectFrame(`frame number "${String.fromCharCode(numberChar)}" is not 0–7`);
    }
    if (number === this.lastFrameNumber) {
      // Our ACK was lost and the sender repeated the frame: acknowledge, keep one copy.
      this.reply(ACK);
      return;
    }
    if (number !== expected) {
      // Replay: no sender to repeat it; the missing frames are reported, with the text around them.
      if (!this.options.reply) return this.gap(body, number, expected);
      this.hold(body, 'sequence');
      return this.rejectFrame(`frame ${number} out of sequence (expected ${expected})`);
    }
    this.accept(body, number);
  }

  private accept(body: Buffer, number: number): void {
    // A good frame stands for the damaged copies before it and for refused copies of itself.
    this.refused = this.refused.filter((r) => r.why === 'sequence' && r.number !== number);
    this.lastFrameNumber = number;
    this.pending.push(body.subarray(1, body.length - 1));
    this.reply(ACK);
    if (this.pending.reduce((sum, part) => sum + part.length, 0) > MAX_PENDING_BYTES) {
      this.problem(`more than ${MAX_PENDING_BYTES} bytes of ETB frames without an ETX frame`);
      for (const piece of fragments(this.pendingText(), `message cut: more than ${MAX_PENDING_BYTES} bytes without an ETX frame`)) this.options.emit(piece);
      this.pending = [];
      return;
    }
    if (body[body.length - 1] === ETX) {
      const text = Buffer.concat(this.pending).toString(this.encoding);
      this.pending = [];
      this.sessionText += text;
      this.options.emit({ kind: 'text', text });
    }
  }

  /** Frame numbers jumped in a replay: report the span, then go on from the frame that arrived. */
  private gap(body: Buffer, number: number, expected: number): void {
    const missing = Array.from({ length: (number - expected + 8) % 8 }, (_, i) => (expected + i) % 8);
    const reason = `frame numbers jump from ${this.lastFrameNumber ?? 'the session start'} to ${number}: frame${missing.length > 1 ? 's' : ''} ${missing.join(', ')} missing from the capture`;
    this.problem(reason);
    const partial = this.pendingText() + this.refusedText();
    this.pending = [];
    this.refused = [];
    this.options.emit({ kind: 'gap', reason, partial });
    this.accept(body, number);
  }

  /** A refused frame's text, kept until it arrives good (bounded like the ETB frames). */
  private hold(body: Buffer, why: Refused['why']): void {
    const text = body.subarray(1, Math.max(1, body.length - 1));
    const copy = this.refused.find((r) => r.why === why && r.number === body[0] - 0x30 && r.text.equals(text));
    if (copy) return;
    if (this.refused.reduce((sum, r) => sum + r.text.length, 0) + text.length > MAX_PENDING_BYTES) return;
    this.refused.push({ number: body[0] - 0x30, text, why });
  }

  /** Why refused frames are in a session's leftovers: the frame it still waited for, or damage. */
  private refusedReason(): string | undefined {
    if (!this.refused.length) return undefined;
    const sequence = this.refused.filter((r) => r.why === 'sequence').map((r) => r.number);
    const waited = ((this.lastFrameNumber ?? 0) + 1) % 8;
    return sequence.length
      ? `session ended without frame ${waited}; the frames after it (${sequence.join(', ')}) were refused as out of sequence and are kept unread`
      : `session ended with ${this.refused.length === 1 ? 'a damaged frame' : `${this.refused.length} damaged frames`} never received good`;
  }

  private refusedText(): string {
    return Buffer.concat(this.refused.map((r) => r.text)).toString(this.encoding);
  }

  private rejectFrame(reason: string): void {
    this.problem(`${reason}; NAK, the sender repeats it`);
    this.state = 'receiving';
    this.reply(NAK);
  }

  private closeSession(): void {
    const abandoned = this.refusedReason() ?? 'session ended with a message cut short (EOT before its last frame)';
    const partial = this.pendingText() + this.refusedText();
    this.state = 'neutral';
    this.pending = [];
    this.refused = [];
    this.options.emit(partial ? { kind: 'session-end', abandoned, partial } : { kind: 'session-end' });
    this.startSending();
  }

  private abandon(why: string): void {
    const refused = this.refusedReason();
    const reason = refused ? `${why}; ${refused}` : why;
    const partial = this.pendingText() + this.refusedText();
    this.state = 'neutral';
    this.pending = [];
    this.refused = [];
    this.log.error(`${this.options.name ?? 'astm'}: ${reason}`);
    this.options.emit({ kind: 'session-end', abandoned: reason, partial });
    this.startSending();
  }

  private pendingText(): string {
    return Buffer.concat(this.pending).toString(this.encoding);
  }

  // Sending our own messages (answers to host queries), between the instrument's sessions.

  private startSending(): void {
    if (this.state !== 'neutral' || this.sending || this.outbox.length === 0) return;
    this.sending = { frames: this.outbox.shift() ?? [], index: 0, tries: 0 };
    this.state = 'await-enq-reply';
    this.reply(ENQ);
  }

  private awaitingReply(byte: number): void {
    const sending = this.sending;
    if (!sending) return;
    if (byte === ENQ && this.state === 'await-enq-reply') {
      // Contention: the instrument wants the line too; it has priority, ours waits (LIS1-A, from memory).
      this.outbox.unshift(sending.frames);
      this.sending = undefined;
      this.state = 'neutral';
      this.neutral(byte);
      return;
    }
    if (byte === ACK) {
      if (this.state === 'await-frame-reply') sending.index++;
      sending.tries = 0;
      if (sending.index >= sending.frames.length) return this.finishSending(true);
      this.state = 'await-frame-reply';
      this.options.reply?.(sending.frames[sending.index]);
      return;
    }
    if (byte === NAK) {
      if (this.state === 'await-enq-reply') {
        this.problem('the instrument is busy (NAK to our ENQ); our answer is not sent');
        return this.finishSending(false);
      }
      if (++sending.tries >= MAX_RETRANSMISSIONS) {
        this.problem(`the instrument refused our frame ${MAX_RETRANSMISSIONS} times; ending with EOT`);
        return this.finishSending(false);
      }
      this.options.reply?.(sending.frames[sending.index]);
      return;
    }
    if (byte === EOT) {
      // Receiver interrupt request: stop sending (from memory: EOT in place of ACK).
      return this.finishSending(false);
    }
    this.stray.push(byte);
  }

  private finishSending(done: boolean): void {
    if (!done) this.log.warn(`${this.options.name ?? 'astm'}: our message was not delivered`);
    if (this.state === 'await-frame-reply' || done) this.reply(EOT);
    this.sending = undefined;
    this.state = 'neutral';
    this.startSending();
  }

  private reply(byte: number): void {
    this.options.reply?.(Buffer.from([byte]));
  }

  private problem(message: string): void {
    this.log.warn(`${this.options.name ?? 'astm'}: ${message}`);
    this.options.onProblem?.(message);
  }
}

export interface AstmLinkStageOptions extends Omit<AstmLinkOptions, 'emit'> {
  /** Live link: protocol timeouts run (off when replaying a file). */
  timers?: boolean;
  /** Neutral-state noise is reported after this much quiet. */
  strayQuietMs?: number;
}

/** Stream stage around AstmLink: bytes in, AstmLinkOutput out; owns the E1381 timers. */
export class AstmLinkStage extends Transform {
  readonly link: AstmLink;
  private timer: NodeJS.Timeout | undefined;

  constructor(private readonly options: AstmLinkStageOptions = {}) {
    super({ writableObjectMode: false, readableObjectMode: true });
    // Busy while the stages after this one have not taken what it already handed up.
    this.link = new AstmLink({ busy: () => this.readableLength >= this.readableHighWaterMark, ...options, emit: (output) => this.push(output) });
  }

  override _transform(chunk: Buffer, _encoding: BufferEncoding, callback: TransformCallback): void {
    this.link.receive(chunk);
    this.arm();
    callback();
  }

  override _flush(callback: TransformCallback): void {
    this.disarm();
    this.link.end();
    callback();
  }

  override _destroy(error: Error | null, callback: (error?: Error | null) => void): void {
    this.disarm();
    callback(error);
  }

  /** Queue a message of ours for the instrument (see AstmLink.send). */
  send(records: readonly string[]): boolean {
    const queued = this.link.send(records);
    this.arm();
    return queued;
  }

  private arm(): void {
    this.disarm();
    if (this.options.timers === false) return;
    const wait = this.link.wait() ?? (this.link.holdingStray ? (this.options.strayQuietMs ?? 2_000) : undefined);
    if (wait === undefined) return;
    this.timer = setTimeout(() => {
      this.timer = undefined;
      this.link.timeout();
      this.arm();
    }, wait);
  }

  private disarm(): void {
    if (this.timer) clearTimeout(this.timer);
    this.timer = undefined;
  }
}
