import { EventEmitter } from 'node:events';
import { PassThrough, type Duplex } from 'node:stream';
import { backoffDelay, formatSeconds, type RetryPolicy } from '../backoff';
import { errorMessage, silentLog, type Log } from '../log';
import type { ByteSource, SourceState } from './source';

export interface Link<T extends Duplex> {
  /** Resolves with an open connection, or rejects if it could not be opened. */
  open(): Promise<T>;
  close(connection: T): Promise<void>;
  /** Release what the link holds besides its connections (a listening socket); called once on stop. */
  shutdown?(): Promise<void>;
}

export interface ReconnectingOptions<T extends Duplex> {
  /** Who is talking, for log lines (the instrument code). */
  name: string;
  /** Where, for log lines and the heartbeat (e.g. tcp://192.0.2.20:4001). */
  address: string;
  link: Link<T>;
  retry?: RetryPolicy;
  log?: Log;
  random?: () => number;
}

export interface RetryingEvent {
  reason: string;
  delayMs: number;
}

interface ReconnectingEvents<T> {
  open: [T];
  retrying: [RetryingEvent];
}

const DEFAULT_RETRY: RetryPolicy = { initialMs: 1_000, maxMs: 30_000 };

/**
 * One continuous byte stream (with a back channel) over a link that may drop (a serial adapter unplugged, a TCP adapter
 * rebooted): opens, and after a failure or a close opens again with backoff, until stopped.
 */
export class ReconnectingSource<T extends Duplex> extends EventEmitter<ReconnectingEvents<T>> implements ByteSource {
  readonly stream = new PassThrough();
  private current: T | undefined;
  private currentState: SourceState = 'connecting';
  private detail: string | undefined;
  private stopped = false;
  private timer: NodeJS.Timeout | undefined;
  private failures = 0;
  private readonly log: Log;

  constructor(private readonly options: ReconnectingOptions<T>) {
    super();
    this.log = options.log ?? silentLog;
    this.detail = options.address;
    void this.connect();
  }

  state(): { state: SourceState; detail?: string } {
    return { state: this.currentState, detail: this.detail };
  }

  async stop(): Promise<void> {
    if (this.stopped) return;
    this.stopped = true;
    clearTimeout(this.timer);
    const connection = this.current;
    this.current = undefined;
    if (connection) {
      connection.unpipe(this.stream);
      await this.options.link.close(connection).catch(() => {});
    }
    await this.options.link.shutdown?.().catch(() => {});
    this.currentState = 'closed';
    this.detail = this.options.address;
    this.stream.end();
  }

  /** Writes to the open connection (ACK/NAK and answers); false when none is open. */
  write(bytes: Buffer): boolean {
    const connection = this.current;
    if (!connection || connection.destroyed || !connection.writable) return false;
    connection.write(bytes);
    return true;
  }

  private async connect(): Promise<void> {
    if (this.stopped) return;
    this.currentState = 'connecting';
    let connection: T;
    try {
      connection = await this.options.link.open();
    } catch (error) {
      this.retryLater(`cannot open ${this.options.address}: ${errorMessage(error)}`);
      return;
    }
    if (this.stopped) {
      await this.options.link.close(connection).catch(() => {});
      return;
    }
    this.current = connection;
    this.failures = 0;
    this.currentState = 'open';
    this.detail = this.options.address;
    this.log.info(`${this.options.name}: reading ${this.options.address}`);
    let lost = false;
    const onLost = (reason: string) => {
      if (lost || this.stopped) return;
      lost = true;
      connection.unpipe(this.stream);
      this.current = undefined;
      void this.options.link.close(connection).catch(() => {});
      this.retryLater(`${this.options.address} ${reason}`);
    };
    connection.on('error', (error) => onLost(`failed: ${errorMessage(error)}`));
    connection.on('close', () => onLost('closed'));
    connection.on('end', () => onLost('closed by the other end'));
    // end: false — the bytes after a reconnect continue the same stream.
    connection.pipe(this.stream, { end: false });
    this.emit('open', connection);
  }

  private retryLater(reason: string): void {
    if (this.stopped) return;
    const delayMs = backoffDelay(this.failures++, this.options.retry ?? DEFAULT_RETRY, this.options.random);
    this.currentState = 'error';
    this.detail = reason.slice(0, 200);
    this.log.warn(`${this.options.name}: ${reason}; trying again in ${formatSeconds(delayMs)}`);
    this.timer = setTimeout(() => void this.connect(), delayMs);
    this.emit('retrying', { reason, delayMs });
  }
}
