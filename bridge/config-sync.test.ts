import { createHash } from 'node:crypto';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { ConfigSync, instrumentsOf, type ServerConfig } from './config-sync';
import { startBridge, type InstrumentConfig } from './pipeline';
import { when } from './testing/events';
import { tempDir } from './testing/payloads';
import { freePort, startTestServer, type Request, type TestServer } from './testing/server';

// The config body and its ETag / If-None-Match → 304 behaviour are the server's contract
// (lib/bridge-config.ts, app/api/bridge/config/route.ts; ETag per RFC 9110 §8.8.3, §13.1.2).

let dir: string;
let cleanup: () => Promise<void>;
let server: TestServer | undefined;
let config: ServerConfig;
let down = false;

const tcp = (port: number, mode?: 'listen') => ({ kind: 'tcp', host: '127.0.0.1', port, ...(mode ? { mode } : {}) });
const instrument = (code: string, dialect: string, connection: unknown, profile: ServerConfig['instruments'][number]['profile'] = null) => ({
  code,
  name: code,
  dialect,
  analytes: [],
  connection,
  profile,
});

function serve(request: Request) {
  if (down) return 'hang-up' as const;
  if (request.path !== '/api/bridge/config') return { status: 200, body: { ok: true } };
  const etag = `"${createHash('sha256').update(JSON.stringify(config)).digest('hex').slice(0, 16)}"`;
  if (request.headers['if-none-match'] === etag) return { status: 304 };
  return { status: 200, body: config, headers: { etag } };
}

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  down = false;
  config = { version: 'v1', bridge: { id: 'b', name: 'Lab PC' }, instruments: [instrument('crp-reader', 'plain-printout', tcp(4001))] };
  server = await startTestServer(serve);
});
afterEach(async () => {
  await server?.close();
  await cleanup();
});

describe('instrumentsOf', () => {
  it('turns the server\'s connections into sources and leaves out what it cannot run, saying why', async () => {
    const profile = { key: 'p1', version: 2, definition: { analyzer: 'x', record: { end: '^END$' }, fields: [{ label: 'v', pattern: '^(?<value>\\d+)$' }], analyte: 'GLU' } };
    const { instruments, problems } = await instrumentsOf({
      version: 'v',
      instruments: [
        instrument('chem', 'astm-e1394', { kind: 'serial', path: '/dev/ttyUSB1', baudRate: 9600, dataBits: 7, parity: 'even', stopBits: 1, flowControl: 'xonxoff' }),
        instrument('hema', 'hl7v2', tcp(4003, 'listen')),
        instrument('printer', 'profile', tcp(4005), profile),
        instrument('nowhere', 'hl7v2', null),
        instrument('odd', 'smoke-signals', tcp(1)),
        instrument('bad-profile', 'profile', tcp(2), { key: 'p2', version: 1, definition: { analyzer: 'y' } }),
      ],
    });
    expect(instruments).toEqual([
      { code: 'chem', dialect: 'astm-e1394', source: { kind: 'serial', path: '/dev/ttyUSB1' }, serial: { baudRate: 9600, dataBits: 7, parity: 'even', stopBits: 1, rtscts: false, xon: true, xoff: true } },
      { code: 'hema', dialect: 'hl7v2', source: { kind: 'tcp-listen', host: '127.0.0.1', port: 4003 } },
      { code: 'printer', dialect: 'profile', source: { kind: 'tcp', host: '127.0.0.1', port: 4005 }, profile: { key: 'p1', version: 2, definition: expect.objectContaining({ analyte: 'GLU' }) } },
    ]);
    expect(problems).toEqual([
      'nowhere: no connection set in Admin → Instruments; not read',
      'odd: this bridge does not know dialect "smoke-signals"; not read',
      expect.stringMatching(/^bad-profile: profile p2 v1 is not valid \(record: /),
    ]);
  });
});

describe('ConfigSync', () => {
  it('applies on start, sends If-None-Match, applies changes, and keeps the last good config while the server is away', async () => {
    const applied: InstrumentConfig[][] = [];
    const sync = new ConfigSync({ server: server?.url ?? '', token: 'bwb_t', spoolDir: dir, apply: async (list) => void applied.push(list), intervalMs: 60_000 });
    await sync.start();
    expect(applied.map((list) => list.map((i) => i.code))).toEqual([['crp-reader']]);
    expect(server?.requests[0].headers.authorization).toBe('Bearer bwb_t');

    const unchanged = when(sync, 'unchanged');
    await sync.poll();
    await unchanged;
    expect(server?.requests.at(-1)?.headers['if-none-match']).toMatch(/^"[0-9a-f]{16}"$/);

    config = { ...config, version: 'v2', instruments: [...config.instruments, instrument('hema', 'hl7v2', tcp(4003, 'listen'))] };
    await sync.poll();
    expect(applied.at(-1)?.map((i) => i.code)).toEqual(['crp-reader', 'hema']);

    down = true;
    const failed = when<[string]>(sync, 'failed');
    await sync.poll();
    expect((await failed)[0]).toMatch(/server unreachable/);
    expect(applied).toHaveLength(2);
    await sync.stop();

    // A restart while the server is away runs the config it last had.
    const later: InstrumentConfig[][] = [];
    const restarted = new ConfigSync({ server: server?.url ?? '', token: 'bwb_t', spoolDir: dir, apply: async (list) => void later.push(list), intervalMs: 60_000 });
    await restarted.start();
    expect(later.map((list) => list.map((i) => i.code))).toEqual([['crp-reader', 'hema']]);
    await restarted.stop();
  });
});

describe('bridge with its config from the server', () => {
  it('starts the server\'s instruments and restarts only the one whose settings changed', async () => {
    // Ports nothing listens on: the sources keep trying, which is all this test needs of them.
    const [a, b, c] = [await freePort(), await freePort(), await freePort()];
    config = { ...config, instruments: [instrument('crp-reader', 'plain-printout', tcp(a)), instrument('chem-analyzer', 'astm-e1394', tcp(b))] };
    const bridge = await startBridge({ server: server?.url ?? '', token: 'bwb_t', spoolDir: join(dir, 'spool'), instruments: [], configFromServer: { intervalMs: 60_000 } });
    const sync = bridge.config;
    if (!sync) throw new Error('no config sync');
    if (bridge.instruments.length < 2) await when(sync, 'applied');
    const [crp, chem] = bridge.instruments;
    expect([crp.code, chem.code]).toEqual(['crp-reader', 'chem-analyzer']);

    config = { ...config, version: 'v2', instruments: [instrument('crp-reader', 'plain-printout', tcp(a)), instrument('chem-analyzer', 'astm-e1394', tcp(c))] };
    await sync.poll();
    expect(bridge.instruments[0]).toBe(crp);
    expect(bridge.instruments[1]).not.toBe(chem);
    expect(bridge.instruments[1].status().detail).toContain(`tcp://127.0.0.1:${c}`);

    config = { ...config, version: 'v3', instruments: [instrument('chem-analyzer', 'astm-e1394', tcp(c))] };
    await sync.poll();
    expect(bridge.instruments.map((i) => i.code)).toEqual(['chem-analyzer']);
    await bridge.stop();
  });
});
