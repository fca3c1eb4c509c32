import { createServer, type Server, type Socket } from 'node:net';
import type { AddressInfo } from 'node:net';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { BridgeRecord } from '../../lib/validation/readings';
import { plainPrintout } from '../dialects/plain-printout';
import { startInstrument } from '../pipeline';
import { Spool } from '../spool';
import { spooled, when } from '../testing/events';
import { tempDir } from '../testing/payloads';
import { freePort } from '../testing/server';
import type { RetryingEvent } from './reconnecting';
import { openTcpSource, parseTcpAddress } from './tcp';

// A serial-to-network adapter in raw mode is a TCP server that passes the serial bytes unchanged;
// a plain net.Server on 127.0.0.1 plays it here.

const slip = (value: string) => ['---- RESULT ----', 'TEST      cCRP', `RESULT    ${value} mg/L`, '---- END ----', ''].join('\r\n');
const retry = { initialMs: 5, maxMs: 20 };

let dir: string;
let cleanup: () => Promise<void>;
let spool: Spool;
const servers: Server[] = [];

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  spool = await Spool.open(dir);
});

afterEach(async () => {
  for (const server of servers.splice(0)) await new Promise((resolve) => server.close(resolve));
  await spool.close();
  await cleanup();
});

async function adapter(onClient: (socket: Socket, index: number) => void, port = 0): Promise<number> {
  let clients = 0;
  const server = createServer((socket) => onClient(socket, clients++));
  servers.push(server);
  await new Promise<void>((resolve) => server.listen(port, '127.0.0.1', resolve));
  return (server.address() as AddressInfo).port;
}


const values = (records: BridgeRecord[]) => records.map((r) => (r.payload.kind === 'reading' ? r.payload.value : r.payload.reason));

describe('tcp source', () => {
  it('reconnects when the adapter drops the connection and keeps reading', async () => {
    const port = await adapter((socket, index) => {
      // First connection: one slip, then the adapter closes it. Second: another slip, left open.
      if (index === 0) socket.end(slip('12.5'));
      else socket.write(slip('13.5'));
    });
    const source = openTcpSource({ instrument: 'crp-reader', host: '127.0.0.1', port, retry });
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    expect(values(await spooled(spool, 2))).toEqual([12.5, 13.5]);
    expect(source.state()).toEqual({ state: 'open', detail: `tcp://127.0.0.1:${port}` });
    await instrument.stop();
    expect(source.state().state).toBe('closed');
  });

  it('keeps trying while nothing listens, then connects', async () => {
    const port = await freePort();
    const source = openTcpSource({ instrument: 'crp-reader', host: '127.0.0.1', port, retry });
    const instrument = startInstrument({ code: 'crp-reader', dialect: plainPrintout, source, spool });
    const [refused] = await when<[RetryingEvent]>(source, 'retrying');
    expect(refused.reason).toMatch(/ECONNREFUSED/);
    expect(source.state().state).toBe('error');
    await adapter((socket) => socket.write(slip('<5.0')), port);
    expect(values(await spooled(spool, 1))).toEqual([5]);
    await instrument.stop();
  });
});

describe('parseTcpAddress', () => {
  it('reads host and port and refuses anything else', () => {
    expect(parseTcpAddress('tcp://192.0.2.20:4001')).toEqual({ host: '192.0.2.20', port: 4001 });
    expect(parseTcpAddress('tcp://[::1]:4001')).toEqual({ host: '::1', port: 4001 });
    expect(parseTcpAddress('tcp://lab-adapter.local:23')).toEqual({ host: 'lab-adapter.local', port: 23 });
    for (const bad of ['tcp://host', 'tcp://host:0', 'tcp://host:70000', 'http://host:80', 'tcp://host:80/path', 'nonsense']) {
      expect(parseTcpAddress(bad)).toMatch(/is not a tcp:\/\/host:port address/);
    }
  });
});
