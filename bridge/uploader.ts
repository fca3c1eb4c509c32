import { EventEmitter } from 'node:events';
import {
  MAX_BATCH,
  bridgeBatchResultSchema,
  type BridgeBatch,
  type BridgeHeartbeat,
  type BridgeRecord,
} from '../lib/validation/readings';
import { backoffDelay, formatSeconds as seconds, type RetryPolicy } from './backoff';
import { errorMessage, silentLog, type Log } from './log';
import type { SourceStatus } from './sources/source';
import type { Spool } from './spool';

export interface UploaderOptions {
  /** Base URL of the Benchwire server, e.g. http://localhost:3000 */
  server: string;
  token: string;
  spool: Spool;
  log?: Log;
  bridgeVersion?: string;
  /** Source states for the heartbeat. */
  sources?: () => SourceStatus[];
  heartbeatMs?: number;
  retry?: RetryPolicy;
  /** Wait between tries while the server refuses the token (it may be re-issued). */
  authRetryMs?: number;
  requestTimeoutMs?: number;
  /** The server refuses bodies over 2 MiB; stay well below. */
  maxBatchBytes?: number;
  fetch?: typeof fetch;
  random?: () => number;
  /**
   * A record the server keeps answering with an error (any status but 2xx, 401/403) is quarantined after
   * this many refusals of it alone, once the server's health check answers: moved to rejected.jsonl so
   * the records behind it flow. Default 5.
   */
  maxRefusals?: number;
  /** While waiting to retry, GET /api/health this often and go again as soon as it answers. Default 2 s. */
  probeMs?: number;
}

export interface QuarantinedEvent {
  key: string;
  instrument: string;
  status: number;
  message: string;
}

export interface UploadedEvent {
  created: number;
  duplicate: number;
  keys: string[];
}

export interface RetryEvent {
  reason: string;
  status?: number;
  delayMs: number;
}

export interface RejectedEvent {
  status: number;
  count: number;
  message: string;
}

interface UploaderEvents {
  uploaded: [UploadedEvent];
  rejected: [RejectedEvent];
  retrying: [RetryEvent];
  unauthorized: [RetryEvent];
  heartbeat: [{ ok: boolean; status?: number }];
  quarantined: [QuarantinedEvent];
  /** Nothing left to send. */
  idle: [];
}

type Answer =
  | { kind: 'confirmed'; keys: string[]; created: number; duplicate: number }
  | { kind: 'rejected'; status: number; error: unknown; message: string }
  | { kind: 'too-large'; status: number; error: unknown; message: string }
  | { kind: 'unauthorized'; status: number; message: string }
  | { kind: 'retry'; status?: number; message: string }
  | { kind: 'stopped' };

// Capped at 15 s: with the health probe a bridge resumes within a few seconds of the server answering again.
const DEFAULT_RETRY: RetryPolicy = { initialMs: 1_000, maxMs: 15_000 };
/** Answered refusals of one batch head before the uploader starts halving to find the record at fault. */
const REFUSALS_BEFORE_SPLIT = 2;

/**
 * Sends spooled records in batches and acks in the spool only the keys the server confirmed.
 * Server away or failing: retry with exponential backoff and jitter. Token refused: retry slowly.
 * Batch refused as malformed (400): halved until the refused record is alone, which is kept in rejected.jsonl for a person; carry on.
 */
export class Uploader extends EventEmitter<UploaderEvents> {
  private readonly spool: Spool;
  private readonly log: Log;
  private readonly retry: RetryPolicy;
  private readonly fetch: typeof fetch;
  private readonly random: () => number;
  private stopping = false;
  private loop: Promise<void> | undefined;
  private heartbeatTimer: NodeJS.Timeout | undefined;
  private heartbeatInFlight: Promise<void> | undefined;
  private heartbeatOk: boolean | undefined;
  private readonly requests = new Set<AbortController>();
  private wake: (() => void) | undefined;
  private wakeOnNewRecord = false;
  /** Consecutive answered refusals of batches starting with this key. */
  private refused = { key: '', count: 0, alone: 0 };
  private readonly quarantined = new Map<string, number>();

  constructor(private readonly options: UploaderOptions) {
    super();
    this.spool = options.spool;
    this.log = options.log ?? silentLog;
    this.retry = options.retry ?? DEFAULT_RETRY;
    this.fetch = options.fetch ?? globalThis.fetch;
    this.random = options.random ?? Math.random;
  }

  start(): this {
    if (this.loop) return this;
    this.spool.on('appended', this.onAppended);
    this.loop = this.run();
    const heartbeatMs = this.options.heartbeatMs ?? 30_000;
    this.heartbeatTimer = setInterval(() => this.beat(), heartbeatMs);
    this.beat();
    return this;
  }

  /** Stop sending; an upload under way is abandoned (its records stay pending). Resolves when idle. */
  async stop(): Promise<void> {
    this.stopping = true;
    clearInterval(this.heartbeatTimer);
    this.spool.off('appended', this.onAppended);
    for (const request of this.requests) request.abort();
    this.wake?.();
    await this.loop;
    await this.heartbeatInFlight;
  }

  private readonly onAppended = () => {
    if (this.wakeOnNewRecord) this.wake?.();
  };

  private async run(): Promise<void> {
    let failures = 0;
    let limit = MAX_BATCH;
    while (!this.stopping) {
      const batch = this.takeBatch(limit);
      if (batch.length === 0) {
        this.emit('idle');
        await this.pause(Number.POSITIVE_INFINITY, true);
        continue;
      }
      const answer = await this.send(batch);
      if (answer.kind === 'stopped') break;
      if (answer.kind === 'retry' && answer.status !== undefined) {
        // The server answered, with an error, again: after a few tries look for one record at fault.
        const same = this.refused.key === batch[0].key;
        this.refused = {
          key: batch[0].key,
          count: (same ? this.refused.count : 0) + 1,
          alone: (same ? this.refused.alone : 0) + (batch.length === 1 ? 1 : 0),
        };
        if (batch.length === 1 && this.refused.alone >= (this.options.maxRefusals ?? 5) && (await this.serverHealthy())) {
          await this.quarantine(batch[0], answer).catch((error) => this.log.error(`upload: could not quarantine ${batch[0].key}: ${errorMessage(error)}`));
          this.refused = { key: '', count: 0, alone: 0 };
          limit = MAX_BATCH;
          continue;
        }
        if (this.refused.count >= REFUSALS_BEFORE_SPLIT && batch.length > 1) {
          const delayMs = this.backoff(failures++);
          limit = Math.ceil(batch.length / 2);
          this.log.warn(`upload: server keeps refusing a batch of ${batch.length} (HTTP ${answer.status}: ${answer.message}); trying ${limit} at a time in ${seconds(delayMs)}`);
          this.emit('retrying', { reason: answer.message, status: answer.status, delayMs });
          await this.pauseWithProbe(delayMs);
          continue;
        }
        if (this.refused.count >= REFUSALS_BEFORE_SPLIT) {
          // Alone and still refused: keep the small limit while retrying it.
          const delayMs = this.backoff(failures++);
          this.log.warn(`upload: server refused record ${batch[0].key} ${this.refused.alone} time(s) on its own (HTTP ${answer.status}: ${answer.message}); trying again in ${seconds(delayMs)}`);
          this.emit('retrying', { reason: answer.message, status: answer.status, delayMs });
          await this.pauseWithProbe(delayMs);
          continue;
        }
      } else if (answer.kind === 'confirmed') {
        this.refused = { key: '', count: 0, alone: 0 };
      }
      // Too large, or refused as malformed: send halves, so one bad record cannot hold back good ones
      // and only the records the server really refuses end up in rejected.jsonl.
      if ((answer.kind === 'too-large' || answer.kind === 'rejected') && batch.length > 1) {
        limit = Math.ceil(batch.length / 2);
        this.log.warn(
          answer.kind === 'too-large'
            ? `upload: server found ${batch.length} records too large for one request; trying ${limit}`
            : `upload: server refused a batch of ${batch.length} (HTTP ${answer.status}: ${answer.message}); sending ${limit} at a time to find the record it refuses`,
        );
        continue;
      }
      limit = MAX_BATCH;
      try {
        failures = await this.settle(batch, answer, failures);
      } catch (error) {
        // The spool could not record the outcome (disk trouble): the batch stays pending and goes again.
        const delayMs = this.backoff(failures++);
        this.log.error(`upload: could not update the spool (${errorMessage(error)}); trying again in ${seconds(delayMs)}`);
        await this.pause(delayMs);
      }
    }
  }

  /** Acts on the server's answer; resolves with the failure count for the next backoff. */
  private async settle(batch: BridgeRecord[], answer: Exclude<Answer, { kind: 'stopped' }>, failures: number): Promise<number> {
    switch (answer.kind) {
      case 'confirmed': {
        await this.spool.ack(answer.keys);
        this.log.info(
          `upload: ${answer.keys.length} record(s) confirmed (${answer.created} created, ${answer.duplicate} duplicate), ${this.spool.depth()} pending`,
        );
        this.emit('uploaded', { created: answer.created, duplicate: answer.duplicate, keys: answer.keys });
        if (answer.keys.length === batch.length) return 0;
        // Should not happen; sending the rest again is safe, the server says which it already has.
        const delayMs = this.backoff(failures);
        this.log.warn(`upload: server confirmed only ${answer.keys.length} of ${batch.length}; sending the rest again in ${seconds(delayMs)}`);
        await this.pause(delayMs);
        return failures + 1;
      }
      case 'rejected':
      case 'too-large': {
        await this.spool.reject(batch, { status: answer.status, error: answer.error });
        this.log.error(
          `upload: server refused ${batch.length} record(s) (HTTP ${answer.status}: ${answer.message}); kept in ${this.spool.dir}/rejected.jsonl for review`,
        );
        this.emit('rejected', { status: answer.status, count: batch.length, message: answer.message });
        return 0;
      }
      case 'unauthorized': {
        const delayMs = this.options.authRetryMs ?? 60_000;
        this.log.error(
          `upload: server refused the bridge token (HTTP ${answer.status}: ${answer.message}); check or re-issue the token; trying again in ${seconds(delayMs)}`,
        );
        this.emit('unauthorized', { reason: answer.message, status: answer.status, delayMs });
        await this.pause(delayMs);
        return failures;
      }
      case 'retry': {
        const delayMs = this.backoff(failures);
        this.log.warn(`upload: ${answer.message}; ${this.spool.depth()} pending, trying again in ${seconds(delayMs)}`);
        this.emit('retrying', { reason: answer.message, status: answer.status, delayMs });
        await this.pauseWithProbe(delayMs);
        return failures + 1;
      }
    }
  }

  /** Oldest pending records, as many as fit one request. */
  private takeBatch(limit: number): BridgeRecord[] {
    const maxBytes = this.options.maxBatchBytes ?? 1_000_000;
    const batch: BridgeRecord[] = [];
    let bytes = 64;
    for (const record of this.spool.pending(limit)) {
      bytes += Buffer.byteLength(JSON.stringify(record)) + 1;
      if (batch.length > 0 && bytes > maxBytes) break;
      batch.push(record);
    }
    return batch;
  }

  private async send(batch: BridgeRecord[]): Promise<Answer> {
    const body: BridgeBatch = { bridgeVersion: this.options.bridgeVersion, records: batch };
    const answer = await this.post('/api/bridge/readings', body);
    if ('stopped' in answer) return { kind: 'stopped' };
    if ('failure' in answer) return { kind: 'retry', message: `server unreachable: ${answer.failure}` };
    const { status, json, text } = answer;
    const message = serverMessage(json, text);
    if (status >= 200 && status < 300) {
      const result = bridgeBatchResultSchema.safeParse(json);
      if (!result.success) return { kind: 'retry', status, message: `server answered HTTP ${status} without a batch result` };
      const sent = new Set(batch.map((record) => record.key));
      const confirmed = result.data.results.filter((entry) => sent.has(entry.key));
      return {
        kind: 'confirmed',
        keys: confirmed.map((entry) => entry.key),
        created: confirmed.filter((entry) => entry.status === 'created').length,
        duplicate: confirmed.filter((entry) => entry.status === 'duplicate').length,
      };
    }
    const error = errorBody(json, text);
    if (status === 400 || status === 422) return { kind: 'rejected', status, error, message };
    if (status === 413) return { kind: 'too-large', status, error, message };
    if (status === 401 || status === 403) return { kind: 'unauthorized', status, message };
    return { kind: 'retry', status, message: `server answered HTTP ${status}${message ? `: ${message}` : ''}` };
  }

  private beat(): void {
    if (this.stopping || this.heartbeatInFlight) return;
    const heartbeat: BridgeHeartbeat = {
      bridgeVersion: this.options.bridgeVersion,
      spoolDepth: this.spool.depth(),
      sources: (this.options.sources?.() ?? []).slice(0, 64).map((source) => ({
        instrument: source.instrument.slice(0, 64),
        state: source.state,
        ...(source.detail ? { detail: source.detail.slice(0, 200) } : {}),
        ...(() => {
          const quarantined = this.quarantined.get(source.instrument);
          const warnings = [
            ...(quarantined ? [`${quarantined} record(s) quarantined: the server kept refusing them; see rejected.jsonl on the bridge PC`] : []),
            ...(source.warnings ?? []),
          ];
          return warnings.length ? { warnings: warnings.slice(0, 10).map((w) => w.slice(0, 200)) } : {};
        })(),
        ...(source.bytesReceived !== undefined ? { bytesReceived: source.bytesReceived } : {}),
        ...(source.lastByteAt ? { lastByteAt: source.lastByteAt } : {}),
      })),
    };
    this.heartbeatInFlight = this.post('/api/bridge/heartbeat', heartbeat)
      .then((answer) => {
        if ('stopped' in answer) return;
        const ok = 'status' in answer && answer.status >= 200 && answer.status < 300;
        // Log changes only: one line when the heartbeat starts or stops getting through.
        if (ok !== this.heartbeatOk) {
          if (ok) this.log.info('heartbeat: server reached');
          else this.log.warn(`heartbeat: ${'failure' in answer ? answer.failure : `HTTP ${answer.status} ${serverMessage(answer.json, answer.text)}`}`);
        }
        this.heartbeatOk = ok;
        this.emit('heartbeat', { ok, status: 'status' in answer ? answer.status : undefined });
      })
      .finally(() => {
        this.heartbeatInFlight = undefined;
      });
  }

  private async post(
    path: string,
    body: unknown,
  ): Promise<{ status: number; json: unknown; text: string } | { failure: string } | { stopped: true }> {
    const controller = new AbortController();
    this.requests.add(controller);
    const signal = AbortSignal.any([controller.signal, AbortSignal.timeout(this.options.requestTimeoutMs ?? 30_000)]);
    try {
      const response = await this.fetch(`${this.options.server.replace(/\/+$/, '')}${path}`, {
        method: 'POST',
        headers: { authorization: `Bearer ${this.options.token}`, 'content-type': 'application/json' },
        body: JSON.stringify(body),
        signal,
      });
      const text = await response.text();
      let json: unknown;
      try {
        json = JSON.parse(text);
      } catch {
        json = undefined;
      }
      return { status: response.status, json, text };
    } catch (error) {
      if (this.stopping) return { stopped: true };
      return { failure: errorMessage(error) };
    } finally {
      this.requests.delete(controller);
    }
  }

  /** Moves a record the server keeps refusing to rejected.jsonl, loudly, and warns admins in the heartbeat. */
  private async quarantine(record: BridgeRecord, answer: { status?: number; message: string }): Promise<void> {
    await this.spool.reject([record], { status: answer.status ?? 0, error: { code: 'quarantined', message: answer.message } });
    this.quarantined.set(record.instrument, (this.quarantined.get(record.instrument) ?? 0) + 1);
    this.log.error(
      `upload: QUARANTINED record ${record.key} from ${record.instrument}: the server refused it ${this.refused.alone} times on its own ` +
        `(HTTP ${answer.status}: ${answer.message}) while answering its health check; kept in ${this.spool.dir}/${'rejected.jsonl'} for a person, the records behind it go on`,
    );
    this.emit('quarantined', { key: record.key, instrument: record.instrument, status: answer.status ?? 0, message: answer.message });
    this.beat();
  }

  /** The server's health check answers 2xx. */
  private async serverHealthy(): Promise<boolean> {
    try {
      const response = await this.fetch(`${this.options.server.replace(/\/+$/, '')}/api/health`, { signal: AbortSignal.timeout(5_000) });
      await response.arrayBuffer();
      return response.ok;
    } catch {
      return false;
    }
  }

  /** Wait for a retry, but go as soon as the server's health check answers again (probing every probeMs). */
  private async pauseWithProbe(ms: number): Promise<void> {
    const probeMs = this.options.probeMs ?? 2_000;
    const until = Date.now() + ms;
    while (!this.stopping && Date.now() < until) {
      await this.pause(Math.min(probeMs, until - Date.now()));
      if (this.stopping || Date.now() >= until) return;
      if (await this.serverHealthy()) return;
    }
  }

  private backoff(failures: number): number {
    return backoffDelay(failures, this.retry, this.random);
  }

  /** Wait, cut short by stop() and, if asked, by a newly spooled record. */
  private pause(ms: number, untilNewRecord = false): Promise<void> {
    if (this.stopping) return Promise.resolve();
    return new Promise((resolve) => {
      const done = () => {
        clearTimeout(timer);
        this.wake = undefined;
        resolve();
      };
      const timer = Number.isFinite(ms) ? setTimeout(done, ms) : undefined;
      this.wake = done;
      this.wakeOnNewRecord = untilNewRecord;
    });
  }
}

function serverMessage(json: unknown, text: string): string {
  const error = (json as { error?: { message?: unknown } } | undefined)?.error;
  if (error && typeof error.message === 'string') return error.message;
  return text.slice(0, 200).trim();
}

function errorBody(json: unknown, text: string): unknown {
  const error = (json as { error?: unknown } | undefined)?.error;
  return error ?? (text.slice(0, 2000) || null);
}

export type { RetryPolicy } from './backoff';
