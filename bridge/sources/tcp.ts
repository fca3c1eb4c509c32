import { connect, type Socket } from 'node:net';
import type { RetryPolicy } from '../backoff';
import type { Log } from '../log';
import { ReconnectingSource } from './reconnecting';

export interface TcpSourceOptions {
  instrument: string;
  host: string;
  port: number;
  retry?: RetryPolicy;
  log?: Log;
  connectTimeoutMs?: number;
}

/**
 * TCP client to a serial-to-network adapter in raw mode: the socket carries the serial bytes as they are.
 * Reconnects with backoff when the adapter closes the connection or cannot be reached.
 */
export function openTcpSource(options: TcpSourceOptions): ReconnectingSource<Socket> {
  return new ReconnectingSource<Socket>({
    name: options.instrument,
    address: `tcp://${options.host}:${options.port}`,
    retry: options.retry,
    log: options.log,
    link: {
      open: () =>
        new Promise((resolve, reject) => {
          const socket = connect({ host: options.host, port: options.port });
          // Without this a dead address waits for the OS's own SYN timeout, minutes on Linux.
          socket.setTimeout(options.connectTimeoutMs ?? 10_000, () => socket.destroy(new Error('connect timed out')));
          socket.once('error', reject);
          socket.once('connect', () => {
            socket.off('error', reject);
            socket.setTimeout(0);
            // An adapter that vanished without closing is noticed by keepalive probes.
            socket.setKeepAlive(true, 30_000);
            resolve(socket);
          });
        }),
      close: (socket) =>
        new Promise((resolve) => {
          if (socket.destroyed) return resolve();
          socket.once('close', () => resolve());
          socket.destroy();
        }),
    },
  });
}

/** tcp://host:port (or another scheme's host:port) → host and port, or an error message. */
export function parseTcpAddress(address: string, scheme = 'tcp'): { host: string; port: number } | string {
  let url: URL;
  try {
    url = new URL(address);
  } catch {
    return `"${address}" is not a ${scheme}://host:port address`;
  }
  const port = Number(url.port);
  if (url.protocol !== `${scheme}:` || !url.hostname || !Number.isInteger(port) || port < 1 || port > 65535 || url.pathname.replace(/^\/$/, '') !== '') {
    return `"${address}" is not a ${scheme}://host:port address`;
  }
  return { host: url.hostname.replace(/^\[(.*)\]$/, '$1'), port };
}
