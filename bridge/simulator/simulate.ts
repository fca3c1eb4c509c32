import { createServer, type Socket } from 'node:net';
import type { AddressInfo } from 'node:net';
import { silentLog, type Log } from '../log';
import type { SerialSettings } from '../sources/serial';
import { createReader, type Printout } from './printouts';

export type SimulatorTarget =
  | { kind: 'stdout'; out?: NodeJS.WritableStream }
  | { kind: 'serial'; path: string; settings?: Partial<SerialSettings> }
  /** waitForClient: hold the first slip until someone connects (demos and tests). */
  | { kind: 'listen'; port: number; host?: string; waitForClient?: boolean };

/** What every simulated analyzer takes. */
export interface SimulatorBase {
  seed: number;
  /** Results to send; unlimited when undefined. */
  count?: number;
  /** Pause between results. */
  everyMs: number;
  serialNumber?: string;
  /** The instrument's clock (what it prints as the result time); now by default. */
  clock?: () => Date;
  log?: Log;
  signal?: AbortSignal;
}

export interface SimulatorOptions extends SimulatorBase {
  target: SimulatorTarget;
  /** Called once the target is ready (for listen: with the port actually bound). */
  onReady?: (info: { port?: number }) => void;
}

interface Printer {
  send(text: string): Promise<string>;
  close(): Promise<void>;
}

/** Prints slips to the target on a schedule until the count is reached or the signal aborts. */
export async function runSimulator(options: SimulatorOptions): Promise<void> {
  const log = options.log ?? silentLog;
  const reader = createReader({ seed: options.seed, serialNumber: options.serialNumber, clock: options.clock });
  const printer = await openPrinter(options, log);
  try {
    for (let printed = 0; options.count === undefined || printed < options.count; printed++) {
      if (options.signal?.aborted) break;
      if (printed > 0 && !(await pause(options.everyMs, options.signal))) break;
      const printout = reader.next();
      const where = await printer.send(printout.text);
      log.info(`simulator: printed ${describe(printout)} ${where}`);
    }
  } finally {
    await printer.close();
  }
}

function describe(printout: Printout): string {
  const what = printout.kind === 'failed run' ? `a failed run (${printout.result})` : `cCRP ${printout.result}`;
  return `${what}${printout.sampleId ? `, sample ${printout.sampleId}` : ''}${printout.notice ? `, after "${printout.notice}"` : ''}`;
}

async function openPrinter(options: SimulatorOptions, log: Log): Promise<Printer> {
  const target = options.target;
  switch (target.kind) {
    case 'stdout': {
      const out = target.out ?? process.stdout;
      return {
        send: (text) => new Promise((resolve, reject) => out.write(text, (error) => (error ? reject(error) : resolve('to stdout')))),
        close: async () => {},
      };
    }
    case 'serial': {
      const { SerialPort } = await import('serialport');
      const { serialSettingsSchema } = await import('../sources/serial');
      const port = new SerialPort({ path: target.path, ...serialSettingsSchema.parse(target.settings ?? {}), autoOpen: false });
      await new Promise<void>((resolve, reject) => port.open((error) => (error ? reject(error) : resolve())));
      options.onReady?.({});
      return {
        send: (text) =>
          new Promise((resolve, reject) => {
            port.write(text);
            port.drain((error) => (error ? reject(error) : resolve(`to ${target.path}`)));
          }),
        close: () => new Promise((resolve) => (port.isOpen ? port.close(() => resolve()) : resolve())),
      };
    }
    case 'listen': {
      // Like a serial-to-network adapter in raw mode: whoever is connected gets the bytes; with nobody
      // connected the slip is printed to no one, as on a printer port with no cable.
      const clients = new Set<Socket>();
      let firstClient: () => void = () => {};
      const connected = new Promise<void>((resolve) => (firstClient = resolve));
      const server = createServer((socket) => {
        clients.add(socket);
        firstClient();
        log.info(`simulator: client ${socket.remoteAddress}:${socket.remotePort} connected`);
        socket.on('close', () => clients.delete(socket));
        socket.on('error', () => socket.destroy());
        socket.resume();
      });
      await new Promise<void>((resolve, reject) => {
        server.once('error', reject);
        server.listen(target.port, target.host ?? '127.0.0.1', () => resolve());
      });
      const address = server.address() as AddressInfo;
      log.info(`simulator: listening on tcp://${address.address}:${address.port}`);
      options.onReady?.({ port: address.port });
      return {
        send: async (text) => {
          if (target.waitForClient) await orAbort(connected, options.signal);
          await Promise.all([...clients].map((socket) => new Promise<void>((resolve) => socket.write(text, () => resolve()))));
          return `to ${clients.size} client(s)`;
        },
        close: () =>
          new Promise((resolve) => {
            for (const socket of clients) socket.end(() => socket.destroy());
            server.close(() => resolve());
          }),
      };
    }
  }
}

/** Resolves true after ms, or false as soon as the signal aborts. */
export function pause(ms: number, signal?: AbortSignal): Promise<boolean> {
  return new Promise((resolve) => {
    if (signal?.aborted) return resolve(false);
    const timer = setTimeout(() => {
      signal?.removeEventListener('abort', onAbort);
      resolve(true);
    }, ms);
    const onAbort = () => {
      clearTimeout(timer);
      resolve(false);
    };
    signal?.addEventListener('abort', onAbort, { once: true });
  });
}

/**
 * Settles with the promise, or with undefined as soon as the signal aborts, and leaves no listener on
 * the signal either way (a simulator waits like this before every slip it prints, for days on end).
 */
export function orAbort<T>(promise: Promise<T>, signal?: AbortSignal): Promise<T | undefined> {
  if (!signal) return promise;
  if (signal.aborted) return Promise.resolve(undefined);
  return new Promise((resolve, reject) => {
    const onAbort = () => resolve(undefined);
    signal.addEventListener('abort', onAbort, { once: true });
    promise.then(
      (value) => {
        signal.removeEventListener('abort', onAbort);
        resolve(value);
      },
      (error: unknown) => {
        signal.removeEventListener('abort', onAbort);
        reject(error instanceof Error ? error : new Error(String(error)));
      },
    );
  });
}

/** Settles when the signal aborts; never without a signal. */
export function aborted(signal?: AbortSignal): Promise<void> {
  return new Promise((resolve) => {
    if (signal?.aborted) return resolve();
    signal?.addEventListener('abort', () => resolve(), { once: true });
  });
}
