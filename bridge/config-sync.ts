import { readFile } from 'node:fs/promises';
import { EventEmitter } from 'node:events';
import { join } from 'node:path';
import { z } from 'zod';
import { DECIMAL_MARKS } from '../lib/validation/numbers';
import { PROFILE_DIALECT, findDialect } from './dialects';
import { loadProfile } from './dialects/profile';
import { writeFileAtomically } from './durable-files';
import { errorMessage, silentLog, type Log } from './log';
import type { InstrumentConfig } from './pipeline';

// The server's GET /api/bridge/config (lib/bridge-config.ts): the instruments assigned to this bridge,
// with their link settings and, for profile-read instruments, the profile's latest version.

const connectionSchema = z.discriminatedUnion('kind', [
  z.object({
    kind: z.literal('serial'),
    path: z.string().min(1),
    baudRate: z.number().int().positive(),
    dataBits: z.union([z.literal(5), z.literal(6), z.literal(7), z.literal(8)]),
    parity: z.enum(['none', 'even', 'odd', 'mark', 'space']),
    stopBits: z.union([z.literal(1), z.literal(1.5), z.literal(2)]),
    flowControl: z.enum(['none', 'rtscts', 'xonxoff']).optional(),
  }),
  z.object({ kind: z.literal('tcp'), host: z.string().min(1), port: z.number().int().min(1).max(65535), mode: z.enum(['connect', 'listen']).optional() }),
]);

export const serverConfigSchema = z.object({
  version: z.string(),
  bridge: z.object({ id: z.string(), name: z.string() }).optional(),
  instruments: z.array(
    z.object({
      code: z.string(),
      name: z.string().optional(),
      dialect: z.string(),
      // Checked per instrument below, so one bad entry does not stop the others.
      connection: z.unknown().nullable().optional(),
      profile: z.object({ key: z.string(), version: z.number(), definition: z.unknown() }).nullable().optional(),
      /** Number format and the name the bridge answers as; an older server sends none. */
      read: z
        .object({
          decimalMark: z.enum(DECIMAL_MARKS).optional(),
          receivingApplication: z.string().max(64).optional(),
          receivingFacility: z.string().max(64).optional(),
        })
        .partial()
        .optional()
        .catch(undefined),
    }),
  ),
});
export type ServerConfig = z.infer<typeof serverConfigSchema>;

/** The server's instruments as the bridge runs them; those it cannot run are left out with a reason. */
export async function instrumentsOf(config: ServerConfig): Promise<{ instruments: InstrumentConfig[]; problems: string[] }> {
  const instruments: InstrumentConfig[] = [];
  const problems: string[] = [];
  for (const entry of config.instruments) {
    if (entry.connection == null) {
      problems.push(`${entry.code}: no connection set in Admin → Instruments; not read`);
      continue;
    }
    const connection = connectionSchema.safeParse(entry.connection);
    if (!connection.success) {
      problems.push(`${entry.code}: connection ${connection.error.issues[0]?.path.join('.')}: ${connection.error.issues[0]?.message}; not read`);
      continue;
    }
    const c = connection.data;
    const instrument: InstrumentConfig =
      c.kind === 'serial'
        ? {
            code: entry.code,
            dialect: entry.dialect,
            source: { kind: 'serial', path: c.path },
            serial: { baudRate: c.baudRate, dataBits: c.dataBits, parity: c.parity, stopBits: c.stopBits, rtscts: c.flowControl === 'rtscts', xon: c.flowControl === 'xonxoff', xoff: c.flowControl === 'xonxoff' },
          }
        : { code: entry.code, dialect: entry.dialect, source: { kind: c.mode === 'listen' ? 'tcp-listen' : 'tcp', host: c.host, port: c.port } };
    if (entry.read?.decimalMark) instrument.decimalMark = entry.read.decimalMark;
    if (entry.read?.receivingApplication) instrument.application = entry.read.receivingApplication;
    if (entry.read?.receivingFacility) instrument.facility = entry.read.receivingFacility;
    if (entry.dialect === PROFILE_DIALECT) {
      if (!entry.profile) {
        problems.push(`${entry.code}: reads by a printout profile, but none is set; not read`);
        continue;
      }
      const profile = await loadProfile(entry.profile.definition);
      if (!profile.ok) {
        problems.push(`${entry.code}: profile ${entry.profile.key} v${entry.profile.version} is not valid (${profile.message}); not read`);
        continue;
      }
      instrument.profile = { key: entry.profile.key, version: entry.profile.version, definition: profile.definition };
    } else if (!findDialect(entry.dialect)) {
      problems.push(`${entry.code}: this bridge does not know dialect "${entry.dialect}"; not read`);
      continue;
    }
    instruments.push(instrument);
  }
  return { instruments, problems };
}

export const CONFIG_CACHE_FILE = 'server-config.json';

export interface ConfigSyncOptions {
  server: string;
  token: string;
  /** The last good config is kept here, so a restart without the server runs it. */
  spoolDir: string;
  apply(instruments: InstrumentConfig[]): Promise<void>;
  log?: Log;
  intervalMs?: number;
  requestTimeoutMs?: number;
  fetch?: typeof fetch;
}

interface ConfigSyncEvents {
  applied: [{ version: string; instruments: InstrumentConfig[] }];
  unchanged: [];
  failed: [string];
}

/**
 * Polls GET /api/bridge/config with If-None-Match (on start and every ~30 s). A new version is applied
 * (the bridge restarts only the pipelines that changed); while the server is away or answers nonsense,
 * the bridge keeps running on the last good config.
 */
export class ConfigSync extends EventEmitter<ConfigSyncEvents> {
  private etag: string | undefined;
  private timer: NodeJS.Timeout | undefined;
  private inFlight: Promise<void> | undefined;
  private waiting = 0;
  private failing = false;
  private stopped = false;
  private readonly controller = new AbortController();
  private readonly log: Log;
  private readonly fetch: typeof fetch;

  constructor(private readonly options: ConfigSyncOptions) {
    super();
    this.log = options.log ?? silentLog;
    this.fetch = options.fetch ?? globalThis.fetch;
  }

  /** Applies the cached config (if any), then polls. Resolves after the first poll. */
  async start(): Promise<void> {
    const cached = await this.readCache();
    if (cached) {
      this.log.info(`config: running the last config from the server (version ${cached.config.version}) until it answers`);
      await this.use(cached.config, cached.etag, false);
    }
    this.timer = setInterval(() => void this.poll(), this.options.intervalMs ?? 30_000);
    await this.poll();
  }

  async stop(): Promise<void> {
    this.stopped = true;
    clearInterval(this.timer);
    this.controller.abort();
    await this.inFlight;
  }

  /** A poll after any under way (also what the timer runs); at most one waits behind the current one. */
  poll(): Promise<void> {
    if (this.waiting > 1 && this.inFlight) return this.inFlight;
    this.waiting++;
    const run = (this.inFlight ?? Promise.resolve()).then(() => this.fetchOnce()).finally(() => {
      this.waiting--;
      if (this.inFlight === run) this.inFlight = undefined;
    });
    this.inFlight = run;
    return run;
  }

  private async fetchOnce(): Promise<void> {
    if (this.stopped) return;
    let response: Response;
    try {
      response = await this.fetch(`${this.options.server.replace(/\/+$/, '')}/api/bridge/config`, {
        headers: { authorization: `Bearer ${this.options.token}`, ...(this.etag ? { 'if-none-match': this.etag } : {}) },
        signal: AbortSignal.any([this.controller.signal, AbortSignal.timeout(this.options.requestTimeoutMs ?? 30_000)]),
      });
    } catch (error) {
      if (!this.stopped) this.fail(`server unreachable: ${errorMessage(error)}`);
      return;
    }
    if (response.status === 304) {
      this.recovered();
      this.emit('unchanged');
      return;
    }
    const text = await response.text().catch(() => '');
    if (response.status !== 200) return this.fail(`server answered HTTP ${response.status} ${text.slice(0, 120)}`);
    let parsed: ReturnType<typeof serverConfigSchema.safeParse>;
    try {
      parsed = serverConfigSchema.safeParse(JSON.parse(text));
    } catch {
      return this.fail('server answered with something that is not JSON');
    }
    if (!parsed.success) return this.fail(`server config does not fit: ${parsed.error.issues[0]?.path.join('.')} ${parsed.error.issues[0]?.message}`);
    this.recovered();
    await this.use(parsed.data, response.headers.get('etag') ?? undefined, true);
  }

  private async use(config: ServerConfig, etag: string | undefined, save: boolean): Promise<void> {
    const { instruments, problems } = await instrumentsOf(config);
    for (const problem of problems) this.log.error(`config: ${problem}`);
    this.log.info(`config: version ${config.version}: ${instruments.map((i) => i.code).join(', ') || 'no instruments'}`);
    await this.options.apply(instruments);
    this.etag = etag;
    if (save) {
      await writeFileAtomically(join(this.options.spoolDir, CONFIG_CACHE_FILE), `${JSON.stringify({ etag, config })}\n`).catch((error) =>
        this.log.warn(`config: could not keep a copy for restarts (${errorMessage(error)})`),
      );
    }
    this.emit('applied', { version: config.version, instruments });
  }

  private async readCache(): Promise<{ config: ServerConfig; etag?: string } | undefined> {
    try {
      const json = JSON.parse(await readFile(join(this.options.spoolDir, CONFIG_CACHE_FILE), 'utf8'));
      const config = serverConfigSchema.safeParse(json.config);
      return config.success ? { config: config.data, etag: typeof json.etag === 'string' ? json.etag : undefined } : undefined;
    } catch {
      return undefined;
    }
  }

  private fail(reason: string): void {
    // One line when it starts failing, not one every 30 s.
    if (!this.failing) this.log.warn(`config: ${reason}; keeping the current instruments`);
    this.failing = true;
    this.emit('failed', reason);
  }

  private recovered(): void {
    if (this.failing) this.log.info('config: server reached again');
    this.failing = false;
  }
}
