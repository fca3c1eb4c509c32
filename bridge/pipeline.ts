import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { Transform, Writable, type TransformCallback } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type { DecimalMark } from '../lib/validation/numbers';
import type { ParserOutput } from '../lib/validation/readings';
import { backoffDelay, formatSeconds } from './backoff';
import { CaptureLog } from './capture-log';
import { checkBridgeOptions } from './config';
import type { ProfileDefinition } from '../lib/validation/profile';
import { ConfigSync } from './config-sync';
import { PROFILE_DIALECT, getDialect, type Dialect } from './dialects';
import { profileDialect } from './dialects/profile';
import type { LineEncoding } from './framing/lines';
import { LinkHealth } from './link-health';
import { errorMessage, silentLog, type Log } from './log';
import { createParsingStages } from './parse-stage';
import { describeSource, openSource, parseSourceSpec, type SourceSpec } from './sources';
import type { SerialBinding, SerialSettings } from './sources/serial';
import type { ByteSource, SourceStatus } from './sources/source';
import { Spool } from './spool';
import { Uploader, type UploaderOptions } from './uploader';

export const BRIDGE_VERSION: string = (() => {
  // Fixed at pack time (scripts/bridge-pack.ts), where no package.json travels with the bundle.
  if (process.env.BENCHWIRE_BRIDGE_VERSION) return process.env.BENCHWIRE_BRIDGE_VERSION.slice(0, 32);
  try {
    return String(JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')).version ?? 'unknown').slice(0, 32);
  } catch {
    return 'unknown';
  }
})();

/** Appends each parser output to the spool; the stream moves on only once it is on disk. */
export class SpoolWriter extends Writable {
  private giveUp = false;
  private wake: (() => void) | undefined;

  constructor(
    private readonly spool: Spool,
    private readonly instrument: string,
    private readonly log: Log,
  ) {
    super({ objectMode: true });
  }

  /** Stop retrying a failing disk (shutting down); what cannot be written goes to the log instead. */
  abandonRetries(): void {
    this.giveUp = true;
    this.wake?.();
  }

  override _write(output: ParserOutput, _encoding: BufferEncoding, callback: (error?: Error | null) => void): void {
    void this.store(output).then(() => callback(), callback);
  }

  private async store(output: ParserOutput): Promise<void> {
    for (let failures = 0; ; failures++) {
      try {
        const record = await this.spool.append(this.instrument, output);
        this.log.info(`${this.instrument}: captured ${describeCapture(output)} [${record.key}]`);
        return;
      } catch (error) {
        if (this.giveUp) {
          this.log.error(`${this.instrument}: could not spool, text follows so it is not lost: ${JSON.stringify(output)}`);
          return;
        }
        // Disk full or unwritable: hold the record (and, by backpressure, the line) and try again.
        const delayMs = backoffDelay(failures, { initialMs: 500, maxMs: 30_000 });
        this.log.error(`${this.instrument}: cannot write the spool (${errorMessage(error)}); trying again in ${formatSeconds(delayMs)}`);
        await new Promise<void>((resolve) => {
          const timer = setTimeout(resolve, delayMs);
          this.wake = () => {
            clearTimeout(timer);
            resolve();
          };
        });
      }
    }
  }
}

function describeCapture(output: ParserOutput): string {
  if (output.kind === 'unparsed') return `unparsed text (${output.reason})`;
  const value = `${output.comparator ?? ''}${output.value ?? '?'}${output.unit ? ` ${output.unit}` : ''}`;
  return `${output.analyte} ${value}${output.sampleId ? `, sample ${output.sampleId}` : ', no sample id'}`;
}

export interface InstrumentOptions {
  code: string;
  dialect: Dialect;
  source: ByteSource;
  spool: Spool;
  encoding?: LineEncoding;
  decimalMark?: DecimalMark;
  application?: string;
  facility?: string;
  log?: Log;
  /** Where the raw capture log of every received byte goes; none, no capture log. */
  captureDir?: string;
}

export interface InstrumentPipeline {
  code: string;
  source: ByteSource;
  health: LinkHealth;
  /** Settles when the source has ended and everything it gave is spooled. */
  done: Promise<void>;
  status(): SourceStatus;
  stop(): Promise<void>;
}

/** First stage: every byte into the raw capture log and the link-health window, passed on unchanged. */
class CaptureTap extends Transform {
  constructor(
    private readonly capture: CaptureLog | undefined,
    private readonly health: LinkHealth,
  ) {
    super();
  }

  override _transform(chunk: Buffer, _encoding: BufferEncoding, callback: TransformCallback): void {
    this.health.observe(chunk);
    // Waiting for the write keeps memory bounded when the disk is slow; it never fails.
    if (this.capture) void this.capture.append(chunk).then(() => callback(null, chunk));
    else callback(null, chunk);
  }
}

/** One instrument: source → capture → (lines → records | protocol framer) → parse → spool; answers go back to the source. */
export function startInstrument(options: InstrumentOptions): InstrumentPipeline {
  const log = options.log ?? silentLog;
  const writer = new SpoolWriter(options.spool, options.code, log);
  const encoding = options.encoding ?? options.dialect.defaultEncoding;
  const health = new LinkHealth({ controlBytes: options.dialect.controlBytes, encoding });
  const capture = options.captureDir ? new CaptureLog(options.captureDir, { log, name: options.code }) : undefined;
  const source = options.source;
  const reply = source.write
    ? (bytes: Buffer) => {
        if (!source.write?.(bytes)) log.warn(`${options.code}: could not answer the instrument (not connected)`);
      }
    : undefined;
  // The instrument's own encoding setting (not the dialect default) goes on, so a message's own charset (MSH-18) can apply.
  const stages = createParsingStages(options.dialect, {
    encoding: options.encoding,
    decimalMark: options.decimalMark,
    application: options.application,
    facility: options.facility,
    reply,
    log,
    name: options.code,
    onProblem: (message) => health.note(message),
  });
  const done = pipeline([source.stream, new CaptureTap(capture, health), ...stages, writer]).then(
    () => log.info(`${options.code}: input ended`),
    (error) => log.error(`${options.code}: pipeline stopped: ${errorMessage(error)}`),
  );
  const finished = done.then(() => capture?.close());
  return {
    code: options.code,
    source,
    health,
    done: finished,
    status: () => {
      const { warnings, bytesReceived, lastByteAt, checksumRetransmissions, framingErrors } = health.status();
      const captureProblem = capture?.problem();
      if (captureProblem) warnings.push(captureWarning(captureProblem));
      return {
        instrument: options.code,
        ...source.state(),
        ...(warnings.length ? { warnings } : {}),
        bytesReceived,
        ...(lastByteAt ? { lastByteAt } : {}),
        checksumRetransmissions,
        framingErrors,
      };
    },
    async stop() {
      await source.stop();
      // Ending the source flushes an unfinished record into the spool as an unparsed fragment.
      // A spool that cannot be written must not hold up shutdown for ever.
      const giveUp = setTimeout(() => writer.abandonRetries(), 10_000);
      await finished;
      clearTimeout(giveUp);
    },
  };
}

/** The heartbeat line for a raw capture log that cannot be (or could not be) written. */
export function captureWarning(problem: NonNullable<ReturnType<CaptureLog['problem']>>): string {
  const gap = `${problem.lostBytes} byte(s) in ${problem.lostChunks} piece(s) not logged`;
  return (
    problem.writing
      ? `raw capture log has a gap (${problem.lastError} earlier): ${gap}; readings were still spooled`
      : `raw capture log cannot be written (${problem.lastError}; disk full or failing?): ${gap} so far; readings are still spooled`
  ).slice(0, 200);
}

/** Where an instrument's raw capture log lives in the spool directory. */
export function captureDirOf(spoolDir: string, instrument: string): string {
  return join(spoolDir, 'capture', instrument);
}

export interface InstrumentConfig {
  code: string;
  dialect: string;
  source: string | SourceSpec;
  serial?: Partial<SerialSettings>;
  encoding?: LineEncoding;
  /** Decimal point (default) or comma in the numbers it sends. */
  decimalMark?: DecimalMark;
  /** The receiving application and facility the bridge answers as (HL7 ACK MSH-3/4). */
  application?: string;
  facility?: string;
  /** For dialect 'profile': the printout profile that reads it. */
  profile?: { key: string; version: number; definition: ProfileDefinition };
}

export interface BridgeOptions {
  server: string;
  token: string;
  spoolDir: string;
  instruments: InstrumentConfig[];
  /** Take the instruments from GET /api/bridge/config and follow its changes. */
  configFromServer?: boolean | { intervalMs?: number };
  log?: Log;
  /** Serial binding for every serial instrument (tests use MockBinding). */
  binding?: SerialBinding;
  uploader?: Partial<Omit<UploaderOptions, 'server' | 'token' | 'spool' | 'log' | 'sources'>>;
}

export interface RunningBridge {
  spool: Spool;
  uploader: Uploader;
  /** The pipelines running now (the list changes when the config does). */
  readonly instruments: InstrumentPipeline[];
  config?: ConfigSync;
  /** Run exactly these instruments: start new ones, stop removed ones, restart only those that changed. */
  apply(instruments: InstrumentConfig[]): Promise<void>;
  stop(): Promise<void>;
}

/** The dialect an instrument is read with; a profile-read one gets its own. */
export function dialectFor(instrument: InstrumentConfig): Dialect {
  if (instrument.dialect === PROFILE_DIALECT) {
    if (!instrument.profile) throw new Error(`${instrument.code}: dialect "profile" needs a printout profile`);
    return profileDialect(instrument.profile.definition, instrument.profile);
  }
  return getDialect(instrument.dialect);
}

/** What makes two configs of one instrument the same pipeline. */
function pipelineKey(instrument: InstrumentConfig): string {
  const { profile, ...rest } = instrument;
  return JSON.stringify({ ...rest, profile: profile ? `${profile.key}@${profile.version}` : null });
}

/** Opens the spool, starts every instrument's pipeline and the shared uploader. */
export async function startBridge(options: BridgeOptions): Promise<RunningBridge> {
  checkBridgeOptions(options);
  const log = options.log ?? silentLog;
  const spool = await Spool.open(options.spoolDir, { log });
  const running = new Map<string, { key: string; pipeline: InstrumentPipeline }>();

  const open = (instrument: InstrumentConfig): InstrumentPipeline => {
    const spec = typeof instrument.source === 'string' ? parseSourceSpec(instrument.source) : instrument.source;
    if (typeof spec === 'string') throw new Error(`${instrument.code}: ${spec}`);
    const dialect = dialectFor(instrument);
    log.info(`${instrument.code}: ${describeSource(spec)} as ${dialect.name}`);
    const source = openSource(spec, { instrument: instrument.code, serial: instrument.serial, binding: options.binding, log });
    return startInstrument({
      code: instrument.code,
      dialect,
      source,
      spool,
      encoding: instrument.encoding,
      decimalMark: instrument.decimalMark,
      application: instrument.application,
      facility: instrument.facility,
      log,
      captureDir: captureDirOf(options.spoolDir, instrument.code),
    });
  };

  let applying: Promise<void> = Promise.resolve();
  const apply = (instruments: InstrumentConfig[], strict = false): Promise<void> => {
    const run = applying.then(async () => {
      const wanted = new Map(instruments.map((instrument) => [instrument.code, instrument]));
      const stopping: Promise<void>[] = [];
      for (const [code, entry] of running) {
        const next = wanted.get(code);
        if (next && pipelineKey(next) === entry.key) continue;
        log.info(`${code}: ${next ? 'settings changed, restarting' : 'no longer configured, stopping'}`);
        running.delete(code);
        stopping.push(entry.pipeline.stop());
      }
      await Promise.all(stopping);
      for (const instrument of instruments) {
        if (running.has(instrument.code)) continue;
        try {
          running.set(instrument.code, { key: pipelineKey(instrument), pipeline: open(instrument) });
        } catch (error) {
          if (strict) throw error;
          log.error(`${instrument.code}: cannot start: ${errorMessage(error)}`);
        }
      }
    });
    applying = run.catch(() => {});
    return run;
  };

  try {
    await apply(options.instruments, true);
  } catch (error) {
    await Promise.all([...running.values()].map((entry) => entry.pipeline.stop()));
    await spool.close();
    throw error;
  }
  const pipelines = () => [...running.values()].map((entry) => entry.pipeline);
  const uploader = new Uploader({
    bridgeVersion: BRIDGE_VERSION,
    ...options.uploader,
    server: options.server,
    token: options.token,
    spool,
    log,
    sources: () => pipelines().map((instrument) => instrument.status()),
  }).start();
  if (spool.depth() > 0) log.info(`spool: ${spool.depth()} record(s) from before are waiting to be sent`);

  const config = options.configFromServer
    ? new ConfigSync({
        server: options.server,
        token: options.token,
        spoolDir: options.spoolDir,
        apply: (instruments) => apply(instruments),
        log,
        intervalMs: typeof options.configFromServer === 'object' ? options.configFromServer.intervalMs : undefined,
      })
    : undefined;
  // The first poll is not awaited: a server that is away must not hold up the instruments.
  void config?.start().catch((error) => log.error(`config: ${errorMessage(error)}`));

  let stopping: Promise<void> | undefined;
  return {
    spool,
    uploader,
    get instruments() {
      return pipelines();
    },
    config,
    apply: (instruments) => apply(instruments),
    stop() {
      stopping ??= (async () => {
        await config?.stop();
        await applying;
        await Promise.all(pipelines().map((instrument) => instrument.stop()));
        running.clear();
        await uploader.stop();
        await spool.close();
      })();
      return stopping;
    },
  };
}
