// The fault suite's moving parts: the real server (server.ts on a production build) and the real bridge
// (bridge/cli.ts run) as separate processes that can be SIGKILLed, a socat pseudo-terminal pair with
// serialport's real binding between an invented CRP printer and the bridge, an optional TCP proxy in
// front of the server (to kill it mid-batch, or to play a server bug), and the count taken from the
// database after the server has stopped.
//
// Every slip carries its sequence number as the sample ID (SAMPLE F<scenario>-000123), so stored,
// duplicated and lost records are counted by sample ID from the readings table.
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';
import { freePort } from '../../bridge/testing/server';
import os from 'node:os';
import path from 'node:path';
import { sql } from 'drizzle-orm';
import type { SerialPort } from 'serialport';
import { closePort, openAnalyzerEnd, startPtyPair, stopPtyPair } from '../../bridge/testing/pty';
import { seededRandom } from '../../bridge/simulator/random';

const root = process.cwd();

/** FAULTS_SCALE (default 1: the issue's counts) shrinks records and faults for a quick local run. */
export function scaled(count: number, minimum = 1): number {
  const scale = Number(process.env.FAULTS_SCALE ?? '1');
  return Math.max(minimum, Math.round(count * (Number.isFinite(scale) && scale > 0 ? scale : 1)));
}

export const SEED = Number(process.env.FAULTS_SEED ?? 20261202);
export const random = (salt: number) => seededRandom(SEED + salt);

const made: string[] = [];

export function tempDir(name: string): string {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), `benchwire-faults-${name}-`));
  made.push(dir);
  return dir;
}

/** Removes the directories this test file made (after its processes are stopped). */
export function removeTempDirs(): void {
  for (const dir of made.splice(0)) fs.rmSync(dir, { recursive: true, force: true });
}


export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

export async function waitFor(what: string, probe: () => boolean | Promise<boolean>, timeoutMs = 120_000, log?: () => string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (await probe()) return;
    await sleep(50);
  }
  throw new Error(`timed out waiting for ${what}${log ? `\n--- output ---\n${log().slice(-6000)}` : ''}`);
}

/** A child process run as plain node with tsx's loader, so a signal reaches the program itself (not a wrapper). */
class Child {
  output = '';
  readonly exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  private readonly listeners: ((line: string) => void)[] = [];

  constructor(
    readonly name: string,
    readonly process: ChildProcess,
  ) {
    let pending = '';
    const take = (chunk: Buffer) => {
      const text = chunk.toString();
      this.output += text;
      pending += text;
      const lines = pending.split('\n');
      pending = lines.pop() ?? '';
      for (const line of lines) for (const listener of this.listeners) listener(line);
    };
    process.stdout?.on('data', take);
    process.stderr?.on('data', take);
    this.exited = new Promise((resolve) => process.once('exit', (code, signal) => resolve({ code, signal })));
  }

  get pid(): number {
    return this.process.pid ?? -1;
  }

  get running(): boolean {
    return this.process.exitCode === null && this.process.signalCode === null;
  }

  onLine(listener: (line: string) => void): void {
    this.listeners.push(listener);
  }

  /** Sends the signal and waits until the process is gone (reaped, so its pid is free and its lock stale). */
  async kill(signal: NodeJS.Signals): Promise<void> {
    if (!this.running) return;
    this.process.kill(signal);
    const timer = setTimeout(() => this.process.kill('SIGKILL'), 20_000);
    await this.exited;
    clearTimeout(timer);
  }
}

function spawnTsx(args: string[], env: Record<string, string>, tsconfig?: string): ChildProcess {
  return spawn(process.execPath, ['--import', 'tsx', ...args], {
    cwd: root,
    env: { ...process.env, NEXT_TELEMETRY_DISABLED: '1', ...(tsconfig ? { TSX_TSCONFIG_PATH: tsconfig } : {}), ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
}

export class ServerProcess extends Child {
  constructor(
    child: ChildProcess,
    readonly port: number,
  ) {
    super('server', child);
  }

  get url(): string {
    return `http://127.0.0.1:${this.port}`;
  }

  static spawn(dataDir: string, port: number, args: string[] = []): ServerProcess {
    const child = spawnTsx(['server.ts', ...args], { DATA_DIR: dataDir, PORT: String(port), HOST: '127.0.0.1', NODE_ENV: 'production' }, 'tsconfig.server.json');
    return new ServerProcess(child, port);
  }

  /** Starts the real server on dataDir and resolves once its health check answers. */
  static async start(dataDir: string, args: string[] = []): Promise<ServerProcess> {
    if (!fs.existsSync(path.join(root, '.next', 'BUILD_ID'))) throw new Error('No production build: run `npx next build` first (npm test and npm run test:faults do).');
    const server = ServerProcess.spawn(dataDir, await freePort(), args);
    await waitFor('the server to answer /api/health', async () => {
      if (!server.running) throw new Error(`the server exited:\n${server.output}`);
      return healthy(server.url);
    }, 180_000, () => server.output);
    return server;
  }
}

export async function healthy(url: string): Promise<boolean> {
  try {
    const response = await fetch(`${url}/api/health`, { signal: AbortSignal.timeout(5_000) });
    await response.arrayBuffer();
    return response.ok;
  } catch {
    return false;
  }
}

/** A seeded demo clinic (bridge token, crp-reader instrument) made once per run and copied per scenario. */
export function dataDirFrom(template: string, name: string): { dataDir: string; token: string } {
  const dataDir = tempDir(name);
  fs.cpSync(template, dataDir, { recursive: true });
  fs.chmodSync(dataDir, 0o700);
  return { dataDir, token: fs.readFileSync(path.join(dataDir, 'demo-bridge-token'), 'utf8').trim() };
}

const CAPTURED = /: captured .*, sample (F\S+) \[/;

/** The real bridge CLI reading one serial instrument (plain-printout slips) into its spool. */
export class BridgeProcess extends Child {
  /** Sample IDs this process logged as spooled (the log line comes after the fsync). */
  readonly captured = new Set<string>();
  reading = false;

  static spawn(options: { server: string; token: string; spool: string; device: string; extraNodeArgs?: string[]; env?: Record<string, string> }): BridgeProcess {
    const args = [
      ...(options.extraNodeArgs ?? []),
      'bridge/cli.ts',
      'run',
      '--instrument',
      'crp-reader',
      '--source',
      `serial:${options.device}`,
      '--dialect',
      'plain-printout',
      '--spool',
      options.spool,
      '--server',
      options.server,
    ];
    return new BridgeProcess('bridge', spawnTsx(args, { BENCHWIRE_BRIDGE_TOKEN: options.token, ...options.env }));
  }

  constructor(name: string, child: ChildProcess) {
    super(name, child);
    this.onLine((line) => {
      const match = CAPTURED.exec(line);
      if (match) this.captured.add(match[1]);
      if (/crp-reader: reading serial:/.test(line)) this.reading = true;
      if (/crp-reader: .* trying again in/.test(line)) this.reading = false;
    });
  }

  /** Resolves once the bridge has the serial device open. */
  async untilReading(): Promise<void> {
    await waitFor('the bridge to open the serial device', () => {
      if (!this.running) throw new Error(`the bridge exited:\n${this.output}`);
      return this.reading;
    }, 60_000, () => this.output);
  }
}

/**
 * Resolves once the bridge has spooled every slip in `ids` and its spool is empty again (the spool file is
 * cut to nothing once the server has confirmed everything in it).
 */
export async function untilDelivered(bridge: BridgeProcess, ids: string[], spoolDir: string, captured: (id: string) => boolean = (id) => bridge.captured.has(id)): Promise<void> {
  await waitFor('every slip spooled', () => ids.every(captured), 180_000, () => bridge.output);
  await waitFor('the spool to drain', () => (fs.statSync(path.join(spoolDir, 'spool.jsonl'), { throwIfNoEntry: false })?.size ?? 0) === 0, 300_000, () => bridge.output);
}

/** The socat pair: the printer's end (analyzer) and the lab PC's end (the bridge's device). */
export class SerialLink {
  private socat: ChildProcess | undefined;
  port: SerialPort | undefined;

  constructor(readonly dir: string) {}

  get device(): string {
    return path.join(this.dir, 'lab-pc');
  }

  async plugIn(): Promise<void> {
    this.socat = await startPtyPair(path.join(this.dir, 'analyzer'), this.device);
    this.port = await openAnalyzerEnd(path.join(this.dir, 'analyzer'));
  }

  /** The device nodes disappear, as when a USB-serial adapter is pulled out. */
  async unplug(): Promise<void> {
    await closePort(this.port);
    this.port = undefined;
    await stopPtyPair(this.socat);
    this.socat = undefined;
  }

  /**
   * Prints one slip and resolves once the bytes are handed to the pty and the time they take on a real
   * line at `baud` (10 bits a character: start, 8 data, stop) has passed; a pty itself has no speed.
   */
  async print(text: string, baud = 38_400): Promise<void> {
    const port = this.port;
    if (!port) throw new Error('the printer is not plugged in');
    await new Promise<void>((resolve, reject) => {
      port.write(text, (error) => (error ? reject(error) : port.drain((e) => (e ? reject(e) : resolve()))));
    });
    await sleep((Buffer.byteLength(text) * 10 * 1000) / baud);
  }
}

/** An invented CRP slip in the plain-printout format, its sequence number as the sample ID. */
export function slip(sampleId: string, seq: number): string {
  const value = (5 + ((seq * 37) % 1900) / 10).toFixed(1);
  return ['---- RESULT ----', 'TEST      cCRP', `RESULT    ${value} mg/L`, `SAMPLE    ${sampleId}`, `RUN       ${String(seq % 10000).padStart(4, '0')}`, 'SN        SIM-0001', '---- END ----', '', ''].join('\r\n');
}

export const sampleIdOf = (prefix: string, seq: number) => `${prefix}-${String(seq).padStart(6, '0')}`;

/**
 * A TCP proxy in front of the server. `onRequest` sees the first bytes of every request sent upstream
 * (to kill the server mid-batch); `intercept` may answer a request itself (to play a server bug).
 */
export class Proxy {
  private readonly server: net.Server;
  private readonly sockets = new Set<net.Socket>();
  port = 0;
  target = 0;
  onRequest: ((head: string) => void) | undefined;
  intercept: ((head: string) => string | undefined) | undefined;

  constructor() {
    this.server = net.createServer((client) => {
      this.sockets.add(client);
      let upstream: net.Socket | undefined;
      let buffered = Buffer.alloc(0);
      const close = () => {
        client.destroy();
        upstream?.destroy();
        this.sockets.delete(client);
      };
      client.on('error', close);
      client.on('close', close);
      client.on('data', (chunk: Buffer) => {
        buffered = Buffer.concat([buffered, chunk]);
        const text = buffered.toString('latin1');
        const headEnd = text.indexOf('\r\n\r\n');
        if (headEnd !== -1) {
          const length = Number(/content-length:\s*(\d+)/i.exec(text.slice(0, headEnd))?.[1] ?? 0);
          if (buffered.length >= headEnd + 4 + length) {
            // A whole request: play a bug, or note it (keep-alive clients send one at a time).
            const answer = this.intercept?.(text);
            if (answer !== undefined) {
              client.write(answer);
              buffered = buffered.subarray(headEnd + 4 + length);
              return;
            }
            this.onRequest?.(text.slice(0, headEnd));
            buffered = buffered.subarray(headEnd + 4 + length);
          }
        }
        if (!upstream) {
          upstream = net.connect(this.target, '127.0.0.1');
          upstream.on('data', (data) => client.write(data));
          upstream.on('error', close);
          upstream.on('close', close);
        }
        upstream.write(chunk);
      });
    });
  }

  async listen(target: number): Promise<this> {
    this.target = target;
    await new Promise<void>((resolve) => this.server.listen(0, '127.0.0.1', resolve));
    this.port = (this.server.address() as net.AddressInfo).port;
    return this;
  }

  get url(): string {
    return `http://127.0.0.1:${this.port}`;
  }

  async close(): Promise<void> {
    for (const socket of this.sockets) socket.destroy();
    await new Promise((resolve) => this.server.close(resolve));
  }
}

export interface Stored {
  /** Readings per sample ID with this scenario's prefix. */
  perSample: Map<string, number>;
  /** Unparsed captures whose text holds the prefix (cut slips are kept as text, never dropped). */
  fragments: number;
}

/** Opens the stopped server's data dir (taking its lock, as the server would) and counts the scenario's records. */
export async function countStored(dataDir: string, prefix: string): Promise<Stored> {
  const { openDataDir } = await import('../../db/client');
  const database = await openDataDir(dataDir);
  try {
    const rows = await database.db.execute<{ sample_id: string; n: number }>(
      sql`select sample_id, count(*)::int as n from readings where sample_id like ${`${prefix}-%`} group by sample_id`,
    );
    const fragments = await database.db.execute<{ n: number }>(sql`select count(*)::int as n from unparsed_captures where raw like ${`%${prefix}-%`}`);
    return { perSample: new Map(rows.rows.map((r) => [r.sample_id, Number(r.n)])), fragments: Number(fragments.rows[0]?.n ?? 0) };
  } finally {
    await database.close();
  }
}

export interface Summary {
  scenario: string;
  sent: number;
  stored: number;
  duplicates: number;
  lost: number;
  /** Records on the wire (printed, not yet spooled) when a process was SIGKILLed: may be lost, and counted. */
  onWireAtKill: number;
  /** Of those, how many were in fact not stored. */
  lostOnWire: number;
  extra?: string;
  /** Sample IDs lost that were not on the wire at a kill. */
  lostIds: string[];
  duplicateIds: string[];
}

/** sent, stored, duplicates, lost, from the database; lost excludes what was on the wire at a SIGKILL (counted apart). */
export function summarize(scenario: string, sent: string[], stored: Stored, onWire: Set<string> = new Set(), extra?: string, excused: Set<string> = new Set()): Summary {
  const lostIds = sent.filter((id) => !stored.perSample.has(id) && !onWire.has(id) && !excused.has(id));
  const duplicateIds = [...stored.perSample].filter(([, n]) => n > 1).map(([id]) => id);
  const summary: Summary = {
    scenario,
    sent: sent.length,
    stored: [...stored.perSample.keys()].filter((id) => sent.includes(id)).length,
    duplicates: [...stored.perSample.values()].reduce((sum, n) => sum + n - 1, 0) + [...stored.perSample.keys()].filter((id) => !sent.includes(id)).length,
    lost: lostIds.length,
    onWireAtKill: onWire.size,
    lostOnWire: sent.filter((id) => onWire.has(id) && !stored.perSample.has(id)).length,
    extra,
    lostIds,
    duplicateIds,
  };
  const line =
    `[faults] ${scenario}: sent ${summary.sent}, stored ${summary.stored}, duplicates ${summary.duplicates}, lost ${summary.lost}` +
    (onWire.size ? ` (on the wire at a SIGKILL: ${onWire.size}, of them not stored: ${summary.lostOnWire})` : '') +
    (extra ? `; ${extra}` : '');
  console.log(line);
  const out = process.env.BENCHWIRE_FAULTS_SUMMARY;
  if (out) fs.appendFileSync(out, `${line}\n`);
  return summary;
}

/** Stops what a scenario started, whatever state it is in. */
export async function stopAll(...things: ({ kill(signal: NodeJS.Signals): Promise<void> } | SerialLink | Proxy | undefined)[]): Promise<void> {
  for (const thing of things) {
    if (!thing) continue;
    if (thing instanceof SerialLink) await thing.unplug().catch(() => {});
    else if (thing instanceof Proxy) await thing.close().catch(() => {});
    else await thing.kill('SIGTERM').catch(() => {});
  }
}

