// `bridge doctor`: what would stop `bridge run` with these settings, found before it is left to run as
// a service. One line per check, OK or FAIL, and for a failure what to do about it.
import { randomBytes } from 'node:crypto';
import fs from 'node:fs/promises';
import os from 'node:os';
import net from 'node:net';
import { join } from 'node:path';
import { SerialPort, type SerialPortOpenOptions } from 'serialport';
import type { AutoDetectTypes } from '@serialport/bindings-cpp';
import { StoreLockedError, lockStore } from '../lib/store-lock';
import { CONFIG_CACHE_FILE, instrumentsOf, serverConfigSchema, type ServerConfig } from './config-sync';
import { errorMessage } from './log';
import type { InstrumentConfig } from './pipeline';
import { describeSource, parseSourceSpec, type SourceSpec } from './sources';
import { serialSettingsSchema, type SerialSettings } from './sources/serial';

export interface Check {
  name: string;
  ok: boolean;
  detail: string;
  /** What to do about a failure. */
  fix?: string;
}

export interface DoctorOptions {
  server: string;
  token: string;
  spoolDir: string;
  /** Serial instruments from flags or a config file; with configFromServer, the server's list instead. */
  instruments: InstrumentConfig[];
  configFromServer?: boolean | object;
  fetch?: typeof fetch;
  now?: () => number;
  /** How far this PC's clock may be from the server's (default CLOCK_LIMIT_MS). */
  clockLimitMs?: number;
  /** The program name in hints ("node bridge.cjs", "npm run bridge --"). */
  program?: string;
}

// The matcher compares the bridge's arrival times with run starts clicked on the server; it works with
// a click spread of 15 s at the least (lib/clinical/matching.ts), so a few seconds of skew already tell.
export const CLOCK_LIMIT_MS = 5_000;

const TIME_SYNC_FIX =
  'turn on time synchronisation on this PC and on the server (Linux: timedatectl set-ntp true; Windows: Settings → Time & language → Set time automatically)';

export async function runDoctor(options: DoctorOptions): Promise<Check[]> {
  const fetcher = options.fetch ?? globalThis.fetch;
  const now = options.now ?? Date.now;
  const program = options.program ?? 'node bridge.cjs';
  const base = options.server.replace(/\/+$/, '');
  const checks: Check[] = [];

  const health = await checkHealth(base, fetcher, now);
  checks.push(health.check);
  checks.push(health.clock ? clockCheck(health.clock, options.clockLimitMs ?? CLOCK_LIMIT_MS) : notChecked('clock', 'the server did not answer'));

  const token = await checkToken(base, options.token, fetcher, health.reached);
  checks.push(token.check);
  checks.push(await checkSpool(options.spoolDir));

  let instruments = options.instruments;
  if (options.configFromServer) {
    const listed = await serverInstruments(token.config, options.spoolDir);
    checks.push(listed.check);
    instruments = listed.instruments;
  }
  for (const instrument of instruments) {
    const spec = typeof instrument.source === 'string' ? parseSourceSpec(instrument.source) : instrument.source;
    if (typeof spec === 'string') continue;
    if (spec.kind === 'serial') checks.push(await checkSerialPort(instrument.code, spec.path, instrument.serial, program));
    if (spec.kind === 'tcp' || spec.kind === 'tcp-listen') checks.push(await checkTcpSource(instrument.code, spec));
  }
  return checks;
}

export function formatChecks(checks: Check[]): string {
  const lines = checks.map((check) => `${check.ok ? 'OK  ' : 'FAIL'} ${check.name}: ${check.detail}${check.fix ? ` → ${check.fix}` : ''}`);
  const failed = checks.filter((check) => !check.ok).length;
  lines.push(failed ? `doctor: ${failed} of ${checks.length} checks failed` : `doctor: all ${checks.length} checks passed`);
  return `${lines.join('\n')}\n`;
}

function notChecked(name: string, why: string): Check {
  return { name, ok: false, detail: `not checked: ${why}`, fix: 'see the server check above' };
}

interface ClockSample {
  /** The server's Date header (whole seconds, RFC 9110 §6.6.1), and this PC's clock before and after asking. */
  serverDate: number;
  sentAt: number;
  answeredAt: number;
}

async function checkHealth(base: string, fetcher: typeof fetch, now: () => number): Promise<{ check: Check; reached: boolean; clock?: ClockSample }> {
  const name = `server ${base}`;
  const sentAt = now();
  let response: Response;
  try {
    response = await fetcher(`${base}/api/health`, { signal: AbortSignal.timeout(10_000) });
  } catch (error) {
    return {
      reached: false,
      check: {
        name,
        ok: false,
        detail: `no answer (${causeOf(error)})`,
        fix: 'check the address (BENCHWIRE_SERVER or --server), that the server is running, and that this PC may reach it (firewall, proxy)',
      },
    };
  }
  const answeredAt = now();
  const text = await response.text().catch(() => '');
  const date = Date.parse(response.headers.get('date') ?? '');
  const clock = Number.isFinite(date) ? { serverDate: date, sentAt, answeredAt } : undefined;
  let body: { status?: unknown; version?: unknown } | undefined;
  try {
    body = JSON.parse(text);
  } catch {
    body = undefined;
  }
  if (!body || typeof body.status !== 'string') {
    return {
      reached: false,
      clock,
      check: { name, ok: false, detail: `answers HTTP ${response.status}, but not as a Benchwire server`, fix: 'check the address: it should be the one people open Benchwire at' },
    };
  }
  if (!response.ok) {
    return {
      reached: true,
      clock,
      check: { name, ok: false, detail: `answers, but reports "${body.status}" (HTTP ${response.status}): its database is unreachable`, fix: "see the server's log; the bridge keeps records in its spool meanwhile" },
    };
  }
  return { reached: true, clock, check: { name, ok: true, detail: `answers (Benchwire ${String(body.version ?? 'unknown')})` } };
}

/**
 * The Date header is the server's time truncated to the second, sent some time between sentAt and
 * answeredAt: the offset is taken from the middle of both, and only a skew beyond the limit plus that
 * uncertainty fails.
 */
export function clockOffset(sample: ClockSample): { offsetMs: number; uncertaintyMs: number } {
  const middle = (sample.sentAt + sample.answeredAt) / 2;
  return { offsetMs: sample.serverDate + 500 - middle, uncertaintyMs: 500 + (sample.answeredAt - sample.sentAt) / 2 };
}

export function clockCheck(sample: ClockSample, limitMs: number): Check {
  const { offsetMs, uncertaintyMs } = clockOffset(sample);
  const seconds = (ms: number) => `${(Math.abs(ms) / 1000).toFixed(1)} s`;
  if (Math.abs(offsetMs) <= limitMs + uncertaintyMs) {
    return { name: 'clock', ok: true, detail: `within ${seconds(Math.max(Math.abs(offsetMs), uncertaintyMs))} of the server's` };
  }
  return {
    name: 'clock',
    ok: false,
    // offset > 0: the server is ahead, so this PC is behind.
    detail: `this PC's clock is ${seconds(offsetMs)} ${offsetMs > 0 ? 'behind' : 'ahead of'} the server's (more than ${seconds(limitMs)}: results would be matched to runs by the wrong times)`,
    fix: TIME_SYNC_FIX,
  };
}

async function checkToken(base: string, token: string, fetcher: typeof fetch, reached: boolean): Promise<{ check: Check; config?: ServerConfig }> {
  const name = 'bridge token';
  const where = 'BENCHWIRE_BRIDGE_TOKEN (on a service: its environment file)';
  if (!token) return { check: { name, ok: false, detail: 'none given', fix: `put the token from Admin → Bridges in ${where}` } };
  if (!reached) return { check: notChecked(name, 'the server did not answer') };
  let response: Response;
  try {
    response = await fetcher(`${base}/api/bridge/config`, { headers: { authorization: `Bearer ${token}` }, signal: AbortSignal.timeout(10_000) });
  } catch (error) {
    return { check: { name, ok: false, detail: `not checked: ${causeOf(error)}`, fix: 'try again; see the server check above' } };
  }
  const text = await response.text().catch(() => '');
  if (response.status === 401 || response.status === 403) {
    return {
      check: {
        name,
        ok: false,
        detail: `refused by the server (HTTP ${response.status})`,
        fix: `copy the bridge's token from Admin → Bridges into ${where}; a revoked token needs a new bridge token`,
      },
    };
  }
  let config: ServerConfig | undefined;
  try {
    const parsed = serverConfigSchema.safeParse(JSON.parse(text));
    config = parsed.success ? parsed.data : undefined;
  } catch {
    config = undefined;
  }
  if (response.status !== 200 || !config) {
    return { check: { name, ok: false, detail: `the server answered HTTP ${response.status} to GET /api/bridge/config`, fix: "see the server's log" } };
  }
  return { config, check: { name, ok: true, detail: `accepted${config.bridge ? ` (bridge "${config.bridge.name}")` : ''}` } };
}

/** The spool must take a file, fsync it and give it back, and no other bridge may be using it. */
async function checkSpool(dir: string): Promise<Check> {
  const name = `spool ${dir}`;
  const probe = join(dir, `.doctor-${process.pid}-${randomBytes(4).toString('hex')}`);
  try {
    await fs.mkdir(dir, { recursive: true, mode: 0o700 });
    const handle = await fs.open(probe, 'wx', 0o600);
    try {
      await handle.writeFile('probe\n');
      await handle.sync();
    } finally {
      await handle.close();
    }
    await fs.rm(probe);
  } catch (error) {
    await fs.rm(probe, { force: true }).catch(() => {});
    const code = (error as NodeJS.ErrnoException).code;
    return {
      name,
      ok: false,
      detail: `cannot write there (${errorMessage(error)})`,
      fix:
        code === 'ENOSPC'
          ? 'the disk is full: free space there'
          : `give ${userName()} a directory of its own it may write to (the service's is /var/lib/benchwire-bridge/spool, made by systemd)`,
    };
  }
  try {
    lockStore(dir, 'bridge doctor')();
  } catch (error) {
    if (error instanceof StoreLockedError) {
      return {
        name,
        ok: false,
        detail: `in use by ${error.holder.what} (pid ${error.holder.pid} on ${error.holder.host})`,
        fix: 'a bridge is already running on this spool: stop it first (systemctl stop benchwire-bridge) or give this one its own --spool',
      };
    }
    return { name, ok: false, detail: `cannot take its lock (${errorMessage(error)})`, fix: `check the permissions of ${dir}` };
  }
  const free = await fs.statfs(dir).then((stats) => stats.bavail * stats.bsize, () => undefined);
  return { name, ok: true, detail: `writable${free === undefined ? '' : `, ${formatBytes(free)} free`}` };
}

/** The server's instruments, or the copy of its last config in the spool when it cannot be asked. */
async function serverInstruments(config: ServerConfig | undefined, spoolDir: string): Promise<{ check: Check; instruments: InstrumentConfig[] }> {
  const name = 'instruments';
  let from = 'from the server';
  if (!config) {
    try {
      const cached = serverConfigSchema.safeParse(JSON.parse(await fs.readFile(join(spoolDir, CONFIG_CACHE_FILE), 'utf8')).config);
      if (cached.success) {
        config = cached.data;
        from = "from the spool's copy of the server's last config";
      }
    } catch {
      // No copy: said below.
    }
  }
  if (!config) {
    return {
      instruments: [],
      check: { name, ok: false, detail: "not known: the server's config could not be read and the spool holds no copy", fix: 'fix the token check above' },
    };
  }
  const { instruments, problems } = await instrumentsOf(config);
  if (instruments.length === 0) {
    return {
      instruments,
      check: {
        name,
        ok: false,
        detail: `none to read ${from}${problems.length ? ` (${problems.join('; ')})` : ''}`,
        fix: 'in Admin → Instruments, give each instrument this bridge and its connection',
      },
    };
  }
  return {
    instruments,
    check: { name, ok: problems.length === 0, detail: `${instruments.map((i) => i.code).join(', ')} ${from}${problems.length ? `; ${problems.join('; ')}` : ''}`, ...(problems.length ? { fix: 'see Admin → Instruments' } : {}) },
  };
}

/** The device is there, this user may read and write it, and it opens with the instrument's settings. */
export async function checkSerialPort(instrument: string, path: string, settings: Partial<SerialSettings> | undefined, program = 'node bridge.cjs'): Promise<Check> {
  const name = `${instrument} serial:${path}`;
  const listHint = `\`${program} ports\` lists the serial ports of this PC`;
  if (process.platform !== 'win32') {
    const stat = await fs.stat(path).catch((error: NodeJS.ErrnoException) => error);
    if (stat instanceof Error) {
      const missing = stat.code === 'ENOENT';
      return {
        name,
        ok: false,
        detail: missing ? 'no such device' : `cannot be looked at (${stat.message})`,
        fix: missing ? `plug in the cable or adapter and check the path; ${listHint} (a USB adapter keeps its /dev/serial/by-id/… name)` : listHint,
      };
    }
    if (!stat.isCharacterDevice()) return { name, ok: false, detail: 'is not a serial device (not a character device)', fix: listHint };
    try {
      await fs.access(path, fs.constants.R_OK | fs.constants.W_OK);
    } catch {
      const group = groupName(stat.gid, await fs.readFile('/etc/group', 'utf8').catch(() => '')) ?? `gid ${stat.gid}`;
      return {
        name,
        ok: false,
        detail: `${userName()} may not read and write it (group ${group}, mode ${(stat.mode & 0o777).toString(8)})`,
        fix: `add the user to group ${group} (sudo usermod -aG ${group} ${userName()}, then sign in again); the service gets it from SupplementaryGroups=`,
      };
    }
  }
  const opened = await openOnce(path, settings);
  if (opened === true) return { name, ok: true, detail: 'opens for reading and writing' };
  if (/lock/i.test(opened)) {
    return { name, ok: false, detail: `in use by another program (${opened})`, fix: 'close that program; a bridge already running (systemctl stop benchwire-bridge) holds its ports' };
  }
  return { name, ok: false, detail: `does not open (${opened})`, fix: process.platform === 'win32' ? `check the COM number in Device Manager → Ports; ${listHint}` : listHint };
}

/**
 * tcp://: a serial-to-network adapter (or analyzer) accepts a connection; tcp-listen://: the bridge may
 * listen where the analyzer will connect. Both are let go at once.
 */
export async function checkTcpSource(instrument: string, spec: Extract<SourceSpec, { kind: 'tcp' | 'tcp-listen' }>): Promise<Check> {
  const name = `${instrument} ${describeSource(spec)}`;
  if (spec.kind === 'tcp') {
    const error = await new Promise<Error | undefined>((resolve) => {
      const socket = net.connect({ host: spec.host, port: spec.port });
      socket.setTimeout(5_000, () => socket.destroy(new Error('no answer within 5 s')));
      socket.once('connect', () => {
        socket.destroy();
        resolve(undefined);
      });
      socket.once('error', resolve);
    });
    if (!error) return { name, ok: true, detail: 'accepts a connection' };
    return {
      name,
      ok: false,
      detail: `does not accept a connection (${errorMessage(error)})`,
      fix: "check the adapter's address and port and that it is in TCP server (raw) mode; many adapters take one client at a time, so stop any other program connected to it",
    };
  }
  const error = await new Promise<Error | undefined>((resolve) => {
    const server = net.createServer();
    server.once('error', resolve);
    server.listen(spec.port, spec.host, () => server.close(() => resolve(undefined)));
  });
  if (!error) return { name, ok: true, detail: 'free to listen on' };
  const inUse = (error as NodeJS.ErrnoException).code === 'EADDRINUSE';
  return {
    name,
    ok: false,
    detail: inUse ? 'another program listens there' : `cannot listen there (${errorMessage(error)})`,
    fix: inUse ? 'stop that program (a bridge already running?) or pick another port, here and in the analyzer' : 'use an address of this PC, and a port above 1023',
  };
}

function openOnce(path: string, settings: Partial<SerialSettings> | undefined): Promise<true | string> {
  const parsed = serialSettingsSchema.safeParse(settings ?? {});
  if (!parsed.success) return Promise.resolve(`settings: ${parsed.error.issues[0]?.message}`);
  return new Promise((resolve) => {
    let port: SerialPort;
    try {
      port = new SerialPort({ path, ...parsed.data, autoOpen: false } as SerialPortOpenOptions<AutoDetectTypes>);
    } catch (error) {
      resolve(errorMessage(error));
      return;
    }
    port.open((error) => {
      if (error) resolve(error.message);
      else port.close(() => resolve(true));
    });
  });
}

/** The name of group gid in /etc/group's text (name:password:gid:members, one a line; group(5)). */
export function groupName(gid: number, etcGroup: string): string | undefined {
  for (const line of etcGroup.split('\n')) {
    const [name, , id] = line.split(':');
    if (name && id !== undefined && Number(id) === gid && id.trim() !== '') return name;
  }
  return undefined;
}

function userName(): string {
  try {
    return os.userInfo().username;
  } catch {
    return 'this user';
  }
}

function causeOf(error: unknown): string {
  const cause = (error as { cause?: unknown })?.cause;
  return cause ? errorMessage(cause) : errorMessage(error);
}

function formatBytes(bytes: number): string {
  if (bytes >= 1024 ** 3) return `${(bytes / 1024 ** 3).toFixed(1)} GB`;
  return `${Math.round(bytes / 1024 ** 2)} MB`;
}
