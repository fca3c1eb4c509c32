import type { Readable } from 'node:stream';

export type SourceState = 'open' | 'connecting' | 'closed' | 'error';

/** What the heartbeat reports per instrument. */
export interface SourceStatus {
  instrument: string;
  state: SourceState;
  detail?: string;
}

/** A byte stream from an analyzer, with a state the heartbeat can report. */
export interface ByteSource {
  readonly stream: Readable;
  state(): { state: SourceState; detail?: string };
  /** Stop reading; the stream ends, so stages downstream flush what they hold. */
  stop(): Promise<void>;
}
