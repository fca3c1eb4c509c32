import { createServer, type IncomingHttpHeaders } from 'node:http';
import { connect, createServer as createNetServer, type AddressInfo, type Socket } from 'node:net';
import type { BridgeBatch, BridgeBatchResult } from '../../lib/validation/readings';

// A real HTTP server on 127.0.0.1 for uploader and bridge tests; each test scripts its answers.

export interface Request {
  path: string;
  headers: IncomingHttpHeaders;
  body: unknown;
}

/** 'hang-up' drops the connection without an answer, as a server killed mid-request would. */
export type Reply = { status: number; body?: unknown; headers?: Record<string, string> } | 'hang-up';

export interface TestServer {
  url: string;
  port: number;
  requests: Request[];
  close(): Promise<void>;
}

export async function startTestServer(handle: (request: Request) => Reply | Promise<Reply>, port = 0): Promise<TestServer> {
  const requests: Request[] = [];
  const server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (chunk: Buffer) => chunks.push(chunk));
    req.on('end', async () => {
      const text = Buffer.concat(chunks).toString('utf8');
      const request = { path: req.url ?? '', headers: req.headers, body: text ? JSON.parse(text) : undefined };
      requests.push(request);
      const reply = await handle(request);
      if (reply === 'hang-up') {
        req.socket.destroy();
        return;
      }
      res.writeHead(reply.status, { 'content-type': 'application/json', ...reply.headers });
      res.end(reply.body === undefined ? '' : JSON.stringify(reply.body));
    });
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => resolve());
  });
  const actual = (server.address() as AddressInfo).port;
  return {
    url: `http://127.0.0.1:${actual}`,
    port: actual,
    requests,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

/** Keeps keys like the real server: 'created' the first time, 'duplicate' after. */
export function keyStore() {
  const ids = new Map<string, string>();
  return {
    ids,
    answer(batch: BridgeBatch): BridgeBatchResult {
      return {
        results: batch.records.map((record) => {
          const known = ids.get(record.key);
          if (known) return { key: record.key, status: 'duplicate' as const, id: known };
          const id = `r${ids.size + 1}`;
          ids.set(record.key, id);
          return { key: record.key, status: 'created' as const, id };
        }),
      };
    },
  };
}

/** Connects to a local port, trying again until something listens there (tests bound it by their timeout). */
export async function dialWhenListening(port: number): Promise<Socket> {
  for (;;) {
    const socket = await new Promise<Socket | undefined>((resolve) => {
      const attempt = connect({ host: '127.0.0.1', port });
      attempt.once('connect', () => resolve(attempt));
      attempt.once('error', () => resolve(undefined));
    });
    if (socket) return socket;
    await new Promise((resolve) => setTimeout(resolve, 20));
  }
}

/** A loopback port nothing listens on right now (connections are refused); the one helper for every test. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createNetServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const { port } = probe.address() as AddressInfo;
      probe.close(() => resolve(port));
    });
  });
}
