import { createServer, type Server } from 'node:net';
import type { AddressInfo } from 'node:net';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { getDialect } from './dialects';
import { startInstrument } from './pipeline';
import { openTcpSource } from './sources/tcp';
import { Spool } from './spool';
import { named } from './testing/astm';
import { spooled } from './testing/events';
import { tempDir } from './testing/payloads';
import { VECTORS } from './testing/vectors';

// The vectors of bridge/testing/vectors.ts (each names its clause) over a live link: a loopback TCP
// server plays a serial-to-network adapter and sends the vector's bytes once the bridge connects; the
// bridge's own TCP source, framer and parser read them with their back channel open, and what the bridge
// answers (E1381 ACK/NAK, HL7 ACKs) is checked against the standard too. `bridge parse` runs the same
// vectors as file replays (bridge/cli.test.ts).

let dir: string;
let cleanup: () => Promise<void>;
let spool: Spool;
let server: Server | undefined;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  spool = await Spool.open(dir);
});

afterEach(async () => {
  if (server) await new Promise((resolve) => server!.close(resolve));
  server = undefined;
  await spool.close();
  await cleanup();
});

/** Sends `bytes` to the first client and keeps everything the client sends back. */
async function adapter(bytes: Buffer): Promise<{ port: number; received: () => Buffer }> {
  const back: Buffer[] = [];
  server = createServer((socket) => {
    socket.on('data', (chunk: Buffer) => back.push(chunk));
    socket.on('error', () => {});
    socket.write(bytes);
  });
  await new Promise<void>((resolve) => server!.listen(0, '127.0.0.1', resolve));
  return { port: (server.address() as AddressInfo).port, received: () => Buffer.concat(back) };
}

describe('standard vectors over a live TCP link', () => {
  for (const vector of VECTORS) {
    it(vector.name, async () => {
      const { port, received } = await adapter(vector.bytes);
      const source = openTcpSource({ instrument: 'bench-1', host: '127.0.0.1', port, retry: { initialMs: 5, maxMs: 50 } });
      const instrument = startInstrument({ code: 'bench-1', dialect: getDialect(vector.dialect), source, spool, decimalMark: vector.decimalMark });
      try {
        const expected = vector.live ?? vector.replay;
        const records = await spooled(spool, expected.length);
        expect(records.map((r) => r.payload)).toEqual(expected);
        if (vector.answers) {
          const text = () => (vector.dialect === 'astm-e1394' ? named(received()) : received().toString('latin1'));
          // The answers are on their way back over the socket: wait for them, not for a time.
          await vi.waitFor(() => vector.answers!(text()), { timeout: 30_000, interval: 20 });
        }
      } finally {
        await instrument.stop();
      }
    }, 60_000);
  }
});
