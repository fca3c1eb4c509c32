import type { Readable } from 'node:stream';

export type SourceState = 'open' | 'connecting' | 'closed' | 'error';

/** What the heartbeat reports per instrument. */
export interface SourceStatus {
  instrument: string;
  state: SourceState;
  detail?: string;
  /** Link-health warnings for people (wrong baud rate or parity, protocol trouble). */
  warnings?: string[];
  bytesReceived?: number;
  lastByteAt?: string;
}

/** A byte stream from an analyzer, with a state the heartbeat can report. */
export interface ByteSource {
  readonly stream: Readable;
  state(): { state: SourceState; detail?: string };
  /** Stop reading; the stream ends, so stages downstream flush what they hold. */
  stop(): Promise<void>;
  /** Send bytes to the instrument (protocol answers); false when nothing is connected. Absent: no back channel. */
  write?(bytes: Buffer): boolean;
}
