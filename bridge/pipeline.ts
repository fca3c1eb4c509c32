import { readFileSync } from 'node:fs';
import { Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type { ParserOutput } from '../lib/validation/readings';
import { backoffDelay, formatSeconds } from './backoff';
import { checkBridgeOptions } from './config';
import { getDialect, type Dialect } from './dialects';
import type { LineEncoding } from './framing/lines';
import { errorMessage, silentLog, type Log } from './log';
import { createParsingStages } from './parse-stage';
import { describeSource, openSource, parseSourceSpec, type SourceSpec } from './sources';
import type { SerialBinding, SerialSettings } from './sources/serial';
import type { ByteSource, SourceStatus } from './sources/source';
import { Spool } from './spool';
import { Uploader, type UploaderOptions } from './uploader';

export const BRIDGE_VERSION: string = (() => {
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
  log?: Log;
}

export interface InstrumentPipeline {
  code: string;
  source: ByteSource;
  /** Settles when the source has ended and everything it gave is spooled. */
  done: Promise<void>;
  status(): SourceStatus;
  stop(): Promise<void>;
}

/** One instrument: source → lines → records → parse → spool. */
export function startInstrument(options: InstrumentOptions): InstrumentPipeline {
  const log = options.log ?? silentLog;
  const writer = new SpoolWriter(options.spool, options.code, log);
  const done = pipeline([options.source.stream, ...createParsingStages(options.dialect, { encoding: options.encoding }), writer]).then(
    () => log.info(`${options.code}: input ended`),
    (error) => log.error(`${options.code}: pipeline stopped: ${errorMessage(error)}`),
  );
  return {
    code: options.code,
    source: options.source,
    done,
    status: () => ({ instrument: options.code, ...options.source.state() }),
    async stop() {
      await options.source.stop();
      // Ending the source flushes an unfinished record into the spool as an unparsed fragment.
      // A spool that cannot be written must not hold up shutdown for ever.
      const giveUp = setTimeout(() => writer.abandonRetries(), 10_000);
      await done;
      clearTimeout(giveUp);
    },
  };
}

export interface InstrumentConfig {
  code: string;
  dialect: string;
  source: string | SourceSpec;
  serial?: Partial<SerialSettings>;
  encoding?: LineEncoding;
}

export interface BridgeOptions {
  server: string;
  token: string;
  spoolDir: string;
  instruments: InstrumentConfig[];
  log?: Log;
  /** Serial binding for every serial instrument (tests use MockBinding). */
  binding?: SerialBinding;
  uploader?: Partial<Omit<UploaderOptions, 'server' | 'token' | 'spool' | 'log' | 'sources'>>;
}

export interface RunningBridge {
  spool: Spool;
  uploader: Uploader;
  instruments: InstrumentPipeline[];
  stop(): Promise<void>;
}

/** Opens the spool, starts every instrument's pipeline and the shared uploader. */
export async function startBridge(options: BridgeOptions): Promise<RunningBridge> {
  checkBridgeOptions(options);
  const log = options.log ?? silentLog;
  const spool = await Spool.open(options.spoolDir, { log });
  const instruments: InstrumentPipeline[] = [];
  try {
    for (const instrument of options.instruments) {
      const spec = typeof instrument.source === 'string' ? parseSourceSpec(instrument.source) : instrument.source;
      if (typeof spec === 'string') throw new Error(`${instrument.code}: ${spec}`);
      const dialect = getDialect(instrument.dialect);
      log.info(`${instrument.code}: ${describeSource(spec)} as ${dialect.name}`);
      const source = openSource(spec, { instrument: instrument.code, serial: instrument.serial, binding: options.binding, log });
      instruments.push(startInstrument({ code: instrument.code, dialect, source, spool, encoding: instrument.encoding, log }));
    }
  } catch (error) {
    await Promise.all(instruments.map((instrument) => instrument.stop()));
    await spool.close();
    throw error;
  }
  const uploader = new Uploader({
    bridgeVersion: BRIDGE_VERSION,
    ...options.uploader,
    server: options.server,
    token: options.token,
    spool,
    log,
    sources: () => instruments.map((instrument) => instrument.status()),
  }).start();
  if (spool.depth() > 0) log.info(`spool: ${spool.depth()} record(s) from before are waiting to be sent`);

  let stopping: Promise<void> | undefined;
  return {
    spool,
    uploader,
    instruments,
    stop() {
      stopping ??= (async () => {
        await Promise.all(instruments.map((instrument) => instrument.stop()));
        await uploader.stop();
        await spool.close();
      })();
      return stopping;
    },
  };
}
