import { createServer, type Socket } from 'node:net';
import type { Duplex } from 'node:stream';
import type { AddressInfo } from 'node:net';
import { ACK, ENQ, EOT, NAK, SENDER_TIMEOUT_MS, MAX_RETRANSMISSIONS, astmFrames } from '../framing/astm-e1381';
import { silentLog } from '../log';
import { compactStamp } from '../local-time';
import { CHEMISTRY, simulateResult, type Species } from './analytes';
import { seededRandom } from './random';
import { orAbort, pause, type SimulatorBase } from './simulate';
import { worklistRuns, type SimulatedRun, type WorklistSource } from './worklist';

// An invented multi-analyte chemistry analyzer that sends each run as an ASTM E1394 message over
// the E1381 low-level protocol, acting as the sender on a TCP port the bridge connects to
// (like a serial-to-network adapter). Now and then it corrupts one frame's checksum once, so the
// bridge's NAK and the retransmission can be seen.

export interface ChemistryMessage {
  records: string[];
  sampleId: string;
  species: Species;
  results: { code: string; value: string; unit: string; flag: string }[];
}

export function createChemistryAnalyzer(options: { seed: number; serialNumber?: string; clock?: () => Date }) {
  const random = seededRandom(options.seed);
  const clock = options.clock ?? (() => new Date());
  const serial = options.serialNumber ?? 'SIM-0002';
  let sample = 2000 + Math.floor(random() * 7000);
  return {
    /** The next run as E1394 records (field numbers as in dialects/astm-e1394.ts). */
    next(run?: SimulatedRun): ChemistryMessage {
      const species: Species = random() < 0.6 ? 'canine' : 'feline';
      const stamp = compactStamp(clock());
      // A run from the worklist carries the order's tube label and the patient's record number; otherwise invented ones.
      const sampleId = run?.analytes ? (run.sampleId ?? '') : `C-${sample++}`;
      const patientRef = run ? (run.patientRef ?? '') : random() < 0.5 ? `PT-${1000 + Math.floor(random() * 9000)}` : '';
      const tests = run?.analytes ? CHEMISTRY.filter((t) => run.analytes!.includes(t.code)) : CHEMISTRY.filter(() => random() < 0.85);
      const panel = tests.length ? tests : [CHEMISTRY[0]];
      const results = panel.map((test) => simulateResult(test, species, random));
      const records = [
        `H|\\^&|||CHEMSIM^1.0^${serial}|||||||P|LIS2-A2|${stamp}`,
        `P|1|${patientRef}`,
        `O|1|${sampleId}||${panel.map((t) => `^^^${t.code}`).join('\\')}|R||${stamp}||||N||||SERUM`,
        ...results.map((r, i) => `R|${i + 1}|^^^${r.code}|${r.value}|${r.unit}|${r.range[0]} to ${r.range[1]}|${r.flag}||F||||${stamp}`),
        'L|1|N',
      ];
      return { records, sampleId, species, results };
    },
    /** Whether to corrupt a frame of the next message (about one in six). */
    corruptNext: () => random() < 0.17,
    pickFrame: (count: number) => Math.floor(random() * count),
  };
}

/** Reads single reply bytes from the bridge with a timeout. */
export class Replies {
  private bytes: number[] = [];
  private waiter: ((byte: number | undefined) => void) | undefined;

  constructor(socket: Duplex) {
    socket.on('data', (chunk: Buffer) => {
      this.bytes.push(...chunk);
      this.wake();
    });
    socket.on('close', () => this.waiter?.(undefined));
  }

  next(timeoutMs: number): Promise<number | undefined> {
    if (this.bytes.length) return Promise.resolve(this.bytes.shift());
    return new Promise((resolve) => {
      const timer = setTimeout(() => {
        this.waiter = undefined;
        resolve(undefined);
      }, timeoutMs);
      this.waiter = (byte) => {
        clearTimeout(timer);
        this.waiter = undefined;
        resolve(byte);
      };
    });
  }

  private wake(): void {
    if (this.waiter && this.bytes.length) this.waiter(this.bytes.shift());
  }
}

/**
 * One E1381 session as the sender: ENQ, each frame until ACKed (at most MAX_RETRANSMISSIONS tries), EOT.
 * corruptFrame: that frame goes out once with a wrong checksum first. Resolves with what happened.
 */
export async function sendSession(socket: Duplex, replies: Replies, records: string[], corruptFrame?: number): Promise<string> {
  const write = (bytes: Buffer | number[]) => socket.write(Buffer.from(bytes));
  write([ENQ]);
  const answer = await replies.next(SENDER_TIMEOUT_MS);
  if (answer !== ACK) {
    write([EOT]);
    return answer === NAK ? 'the bridge is busy (NAK to ENQ)' : 'no ACK to ENQ';
  }
  const frames = astmFrames(records);
  let retransmissions = 0;
  for (let i = 0; i < frames.length; i++) {
    for (let tries = 0; ; tries++) {
      const frame = Buffer.from(frames[i]);
      if (i === corruptFrame && tries === 0) frame[frame.length - 3] = frame[frame.length - 3] === 0x30 ? 0x31 : 0x30;
      write(frame);
      const reply = await replies.next(SENDER_TIMEOUT_MS);
      if (reply === ACK) break;
      if (reply === NAK && tries + 1 < MAX_RETRANSMISSIONS) {
        retransmissions++;
        continue;
      }
      write([EOT]);
      return reply === NAK ? `frame ${i + 1} refused ${MAX_RETRANSMISSIONS} times` : `no reply to frame ${i + 1}`;
    }
  }
  write([EOT]);
  return `${frames.length} frames sent${retransmissions ? `, ${retransmissions} sent again after NAK` : ''}`;
}

export interface ChemistryOptions extends SimulatorBase {
  port: number;
  host?: string;
  onReady?: (info: { port: number }) => void;
  /** Corrupt a frame of about one message in six (default), of every message, or never. */
  corrupt?: boolean | 'every message';
  /** Run only the tests on this worklist (as instrument `instrument`), instead of one run every everyMs. */
  worklist?: { source: WorklistSource; instrument: string; pollMs?: number };
}

/** Listens; while the bridge is connected, sends a run every everyMs. */
export async function runAstmChemistry(options: ChemistryOptions): Promise<void> {
  const log = options.log ?? silentLog;
  const analyzer = createChemistryAnalyzer(options);
  const runs = options.worklist ? worklistRuns({ ...options.worklist, random: seededRandom(options.seed + 1) }) : undefined;
  let pending: SimulatedRun | undefined;
  let client: { socket: Socket; replies: Replies } | undefined;
  let connected: () => void = () => {};
  let connection = new Promise<void>((resolve) => (connected = resolve));
  const server = createServer((socket) => {
    client?.socket.destroy();
    client = { socket, replies: new Replies(socket) };
    log.info(`chemistry simulator: ${socket.remoteAddress}:${socket.remotePort} connected`);
    socket.on('error', () => socket.destroy());
    socket.on('close', () => {
      if (client?.socket === socket) client = undefined;
      connection = new Promise<void>((resolve) => (connected = resolve));
    });
    connected();
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(options.port, options.host ?? '127.0.0.1', () => resolve());
  });
  const port = (server.address() as AddressInfo).port;
  log.info(`chemistry simulator: ASTM E1381 sender on tcp://${options.host ?? '127.0.0.1'}:${port}`);
  options.onReady?.({ port });
  try {
    for (let sent = 0; options.count === undefined || sent < options.count; ) {
      if (options.signal?.aborted) break;
      if (!client) await orAbort(connection, options.signal);
      if (!client || options.signal?.aborted) continue;
      // With a worklist, wait until one of its tests is due (kept if the bridge disconnects meanwhile).
      pending ??= runs ? await runs.next(options.signal) : undefined;
      if (runs && !pending) break;
      const current = client as { socket: Socket; replies: Replies } | undefined;
      if (!current) continue;
      const message = analyzer.next(pending);
      pending = undefined;
      const corrupting = options.corrupt === 'every message' || (options.corrupt !== false && analyzer.corruptNext());
      const corrupt = corrupting ? analyzer.pickFrame(message.records.length) : undefined;
      const outcome = await sendSession(current.socket, current.replies, message.records, corrupt);
      log.info(`chemistry simulator: sample ${message.sampleId} (${message.species}, ${message.results.map((r) => `${r.code} ${r.value}`).join(', ')}): ${outcome}`);
      sent++;
      if (!runs && (options.count === undefined || sent < options.count) && !(await pause(options.everyMs, options.signal))) break;
    }
  } finally {
    client?.socket.end();
    await new Promise<void>((resolve) => server.close(() => resolve()));
    client?.socket.destroy();
  }
}
