import { connect, type Socket } from 'node:net';
import { backoffDelay } from '../backoff';
import { MllpCutter, mllpWrap } from '../framing/mllp';
import { errorMessage, silentLog } from '../log';
import { compactStamp } from '../local-time';
import { HEMATOLOGY, simulateResult, type Species } from './analytes';
import { seededRandom } from './random';
import { aborted, pause, type SimulatorBase } from './simulate';
import { worklistRuns, type SimulatedRun, type WorklistSource } from './worklist';

// An invented hematology analyzer that connects out to the bridge (MLLP over TCP) and sends each
// run as an HL7 v2.5 ORU^R01, waiting for the ACK (field numbers as in dialects/hl7v2.ts).

export interface HematologyMessage {
  text: string;
  controlId: string;
  sampleId: string;
  species: Species;
  results: { code: string; value: string }[];
}

export function createHematologyAnalyzer(options: { seed: number; serialNumber?: string; clock?: () => Date }) {
  const random = seededRandom(options.seed);
  const clock = options.clock ?? (() => new Date());
  const serial = options.serialNumber ?? 'SIM-0003';
  let sample = 3000 + Math.floor(random() * 6000);
  let control = 1;
  return {
    next(run?: SimulatedRun): HematologyMessage {
      const species: Species = random() < 0.6 ? 'canine' : 'feline';
      const stamp = compactStamp(clock());
      // A run from the worklist carries the order's tube label and the patient's record number; otherwise invented ones.
      const sampleId = run?.analytes ? (run.sampleId ?? '') : `H-${sample++}`;
      const controlId = `HEMA${String(control++).padStart(6, '0')}`;
      const patientRef = run ? (run.patientRef ?? '') : random() < 0.5 ? `PT-${1000 + Math.floor(random() * 9000)}` : '';
      // A blood count measures the whole panel whatever was ordered (common practice, no source).
      const results = HEMATOLOGY.map((test) => simulateResult(test, species, random));
      const segments = [
        `MSH|^~\\&|HEMASIM|BENCH3|BENCHWIRE|CLINIC|${stamp}||ORU^R01^ORU_R01|${controlId}|P|2.5`,
        `PID|1||${patientRef}`,
        `OBR|1||${sampleId}|CBC^Complete blood count|||${stamp}`,
        ...results.map((r, i) => `OBX|${i + 1}|NM|${r.code}^${r.code}||${r.value}|${r.unit}|${r.range[0]}-${r.range[1]}|${r.flag}|||F|||${stamp}||||${serial}`),
      ];
      return { text: `${segments.join('\r')}\r`, controlId, sampleId, species, results: results.map((r) => ({ code: r.code, value: r.value })) };
    },
  };
}

export interface HematologyOptions extends SimulatorBase {
  host: string;
  port: number;
  /** How long to wait for the ACK before sending the message again. */
  ackTimeoutMs?: number;
  /** Run only the tests on this worklist (as instrument `instrument`), instead of one run every everyMs. */
  worklist?: { source: WorklistSource; instrument: string; pollMs?: number };
}

/** Connects (and reconnects with backoff) to the bridge; sends a run every everyMs and waits for its ACK. */
export async function runHl7Hematology(options: HematologyOptions): Promise<void> {
  const log = options.log ?? silentLog;
  const analyzer = createHematologyAnalyzer(options);
  const runs = options.worklist ? worklistRuns({ ...options.worklist, random: seededRandom(options.seed + 1) }) : undefined;
  let pending: SimulatedRun | undefined;
  const where = `tcp://${options.host}:${options.port}`;
  let socket: Socket | undefined;
  let failures = 0;
  try {
    for (let sent = 0; options.count === undefined || sent < options.count; ) {
      if (options.signal?.aborted) break;
      if (!socket || socket.destroyed) {
        socket = await open(options.host, options.port).catch((error) => {
          const delay = backoffDelay(failures++, { initialMs: 500, maxMs: 10_000 });
          log.warn(`hematology simulator: cannot reach ${where} (${errorMessage(error)}); trying again in ${(delay / 1000).toFixed(1)} s`);
          return pause(delay, options.signal).then(() => undefined);
        });
        if (!socket) continue;
        failures = 0;
        log.info(`hematology simulator: connected to ${where}`);
      }
      pending ??= runs ? await runs.next(options.signal) : undefined;
      if (runs && !pending) break;
      const message = analyzer.next(pending);
      pending = undefined;
      const ack = await exchange(socket, message.text, options.ackTimeoutMs ?? 30_000, options.signal);
      log.info(`hematology simulator: sample ${message.sampleId} (${message.species}, ${message.results.map((r) => `${r.code} ${r.value}`).join(', ')}): ${ack}`);
      sent++;
      if (!runs && (options.count === undefined || sent < options.count) && !(await pause(options.everyMs, options.signal))) break;
    }
  } finally {
    socket?.end();
    socket?.destroy();
  }
}

function open(host: string, port: number): Promise<Socket> {
  return new Promise((resolve, reject) => {
    const socket = connect({ host, port });
    socket.once('error', reject);
    socket.once('connect', () => {
      socket.off('error', reject);
      socket.on('error', () => socket.destroy());
      resolve(socket);
    });
  });
}

/** Sends one message and resolves with its ACK's MSA-1 and MSA-3, or why there was none. */
function exchange(socket: Socket, text: string, timeoutMs: number, signal?: AbortSignal): Promise<string> {
  const cutter = new MllpCutter();
  return new Promise((resolve) => {
    const finish = (outcome: string) => {
      clearTimeout(timer);
      socket.off('data', onData);
      socket.off('close', onClose);
      resolve(outcome);
    };
    const onData = (chunk: Buffer) => {
      for (const frame of cutter.push(chunk)) {
        const msa = frame.kind === 'record' ? frame.lines.find((line) => line.text.startsWith('MSA'))?.text.split('|') : undefined;
        if (msa) return finish(`ACK ${msa[1]}${msa[3] ? ` (${msa[3]})` : ''}`);
      }
    };
    const onClose = () => finish('connection closed before the ACK');
    const timer = setTimeout(() => finish(`no ACK within ${timeoutMs / 1000} s`), timeoutMs);
    socket.on('data', onData);
    socket.on('close', onClose);
    void aborted(signal).then(() => finish('stopped'));
    socket.write(mllpWrap(text));
  });
}
