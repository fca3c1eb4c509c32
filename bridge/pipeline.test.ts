import type { ChildProcess } from 'node:child_process';
import { join } from 'node:path';
import type { SerialPort } from 'serialport';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bridgeBatchSchema, type BridgeRecord } from '../lib/validation/readings';
import { startBridge, type RunningBridge } from './pipeline';
import { createReader } from './simulator/printouts';
import { runSimulator } from './simulator/simulate';
import type { ReconnectingSource } from './sources/reconnecting';
import { Spool } from './spool';
import { when } from './testing/events';
import { tempDir } from './testing/payloads';
import { startPtyPair, stopPtyPair } from './testing/pty';
import { keyStore, startTestServer, type TestServer } from './testing/server';

// The whole bridge over a real pseudo-terminal pair (socat) with serialport's real binding: the
// simulated reader writes slips into one end, the bridge reads the other, spools and posts them.

let dir: string;
let cleanup: () => Promise<void>;
let socat: ChildProcess | undefined;

beforeAll(async () => {
  ({ dir, cleanup } = await tempDir());
  socat = await startPtyPair(join(dir, 'analyzer'), join(dir, 'lab-pc'));
});

afterAll(async () => {
  await stopPtyPair(socat);
  await cleanup();
});

describe('bridge over a real pseudo-terminal pair', () => {
  let server: TestServer | undefined;
  let bridge: RunningBridge | undefined;

  afterAll(async () => {
    await bridge?.stop();
    await server?.close();
  });

  it('captures what the reader prints, spools it and posts it to the server', async () => {
    const clock = () => new Date(2026, 11, 1, 14, 3, 22);
    const slips = (() => {
      const reader = createReader({ seed: 31, clock });
      return Array.from({ length: 6 }, () => reader.next());
    })();
    const expected = slips.reduce((sum, slip) => sum + (slip.notice ? 2 : 1), 0);

    const store = keyStore();
    const received: BridgeRecord[] = [];
    server = await startTestServer((request) => {
      if (request.path === '/api/bridge/heartbeat') return { status: 200, body: { ok: true } };
      const batch = bridgeBatchSchema.parse(request.body);
      received.push(...batch.records);
      return { status: 200, body: store.answer(batch) };
    });

    const spoolDir = join(dir, 'spool');
    bridge = await startBridge({
      server: server.url,
      token: 'bwb_pty-test',
      spoolDir,
      instruments: [{ code: 'crp-reader', dialect: 'plain-printout', source: `serial:${join(dir, 'lab-pc')}`, serial: { baudRate: 9600 } }],
      uploader: { retry: { initialMs: 20, maxMs: 200 } },
    });
    const running = bridge;
    const source = running.instruments[0].source as ReconnectingSource<SerialPort>;
    if (source.state().state !== 'open') await when(source, 'open');
    // Done when the server has every record and the bridge has its confirmation.
    const confirmed = when(running.uploader, 'uploaded', () => store.ids.size >= expected && running.spool.depth() === 0);

    await runSimulator({ target: { kind: 'serial', path: join(dir, 'analyzer'), settings: { baudRate: 9600 } }, seed: 31, count: 6, everyMs: 0, clock });
    await confirmed;

    // What arrived, in order, is what was printed: notices as unparsed text, slips as readings or failed runs.
    const printed = slips.flatMap((slip) => [...(slip.notice ? [`${slip.notice}\r\n`] : []), slip.text.slice(slip.notice ? slip.notice.length + 4 : 0)]);
    expect(received.map((record) => record.payload.raw)).toEqual(printed.map((text) => text.replace(/\r\n\r\n$/, '\r\n')));
    expect(received.every((record) => record.instrument === 'crp-reader')).toBe(true);
    const readings = received.filter((record) => record.payload.kind === 'reading');
    expect(readings).toHaveLength(slips.filter((slip) => slip.kind === 'result').length);

    await bridge.stop();
    bridge = undefined;
    const spool = await Spool.open(spoolDir);
    expect(spool.pending()).toEqual([]);
    await spool.close();
  });
});
