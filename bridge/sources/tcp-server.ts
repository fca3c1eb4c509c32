import { createServer, type Server, type Socket } from 'node:net';
import type { RetryPolicy } from '../backoff';
import type { Log } from '../log';
import { ReconnectingSource } from './reconnecting';

export interface TcpServerSourceOptions {
  instrument: string;
  host: string;
  port: number;
  retry?: RetryPolicy;
  log?: Log;
}

/**
 * Listens for an analyzer that connects out to the bridge (HL7 over MLLP usually does). One analyzer
 * per instrument: a new connection replaces the old one (the analyzer reconnected after a network
 * blip and the old socket is dead), so the bytes stay one ordered stream.
 */
export function openTcpServerSource(options: TcpServerSourceOptions): ReconnectingSource<Socket> {
  const address = `tcp-listen://${options.host.includes(':') ? `[${options.host}]` : options.host}:${options.port}`;
  let server: Server | undefined;
  let active: Socket | undefined;
  const queued: Socket[] = [];
  let waiter: { resolve(socket: Socket): void; reject(error: Error): void } | undefined;

  const onConnection = (socket: Socket) => {
    options.log?.info(`${options.instrument}: ${socket.remoteAddress}:${socket.remotePort} connected to ${address}`);
    socket.setKeepAlive(true, 30_000);
    if (waiter) {
      const { resolve } = waiter;
      waiter = undefined;
      active = socket;
      resolve(socket);
      return;
    }
    queued.push(socket);
    // The newer connection wins. The old one is ended, not destroyed, so bytes it already sent are
    // still read; one that does not close (a dead peer) is dropped after a while.
    const old = active;
    if (old && !old.destroyed) {
      old.end();
      setTimeout(() => old.destroy(), 5_000).unref();
    }
  };

  const listen = () =>
    new Promise<Server>((resolve, reject) => {
      const candidate = createServer(onConnection);
      candidate.once('error', reject);
      candidate.listen(options.port, options.host, () => {
        candidate.off('error', reject);
        candidate.on('error', (error) => options.log?.error(`${options.instrument}: ${address}: ${error.message}`));
        resolve(candidate);
      });
    });

  return new ReconnectingSource<Socket>({
    name: options.instrument,
    address,
    retry: options.retry ?? { initialMs: 200, maxMs: 10_000 },
    log: options.log,
    link: {
      async open() {
        server ??= await listen();
        const next = queued.shift();
        if (next) {
          active = next;
          return next;
        }
        return new Promise<Socket>((resolve, reject) => (waiter = { resolve, reject }));
      },
      close: (socket) =>
        new Promise((resolve) => {
          if (socket === active) active = undefined;
          if (socket.destroyed) return resolve();
          socket.once('close', () => resolve());
          socket.destroy();
        }),
      async shutdown() {
        waiter?.reject(new Error('stopped'));
        waiter = undefined;
        for (const socket of queued.splice(0)) socket.destroy();
        active?.destroy();
        const listening = server;
        server = undefined;
        if (listening) await new Promise<void>((resolve) => listening.close(() => resolve()));
      },
    },
  });
}
