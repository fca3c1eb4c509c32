import type { ChildProcess } from 'node:child_process';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { SerialPort } from 'serialport';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { lockStore } from '../lib/store-lock';
import { CONFIG_CACHE_FILE } from './config-sync';
import { clockCheck, clockOffset, formatChecks, groupName, runDoctor, type Check, type DoctorOptions } from './doctor';
import { tempDir } from './testing/payloads';
import { closePort, openAnalyzerEnd, startPtyPair, stopPtyPair } from './testing/pty';
import { freePort, startTestServer, type Reply, type TestServer } from './testing/server';

// `bridge doctor` against a real HTTP server on loopback (scripted answers in the shapes of
// app/api/health and app/api/bridge/config), a socat pseudo-terminal pair opened with serialport's real
// binding, and device paths that are missing or not devices.

const TOKEN = 'bw_good_token';
let dir: string;
let cleanup: () => Promise<void>;
let server: TestServer | undefined;
let socat: ChildProcess | undefined;
let held: SerialPort | undefined;
let serverDate: () => string;
let configAnswer: () => Reply;

beforeEach(async () => {
  ({ dir, cleanup } = await tempDir());
  serverDate = () => new Date().toUTCString();
  configAnswer = () => ({ status: 200, body: { version: 'v1', bridge: { id: 'b1', name: 'Lab PC' }, instruments: [] } });
  server = await startTestServer((request) => {
    const date = { date: serverDate() };
    if (request.path === '/api/health') return { status: 200, headers: date, body: { status: 'ok', version: '9.9.9', database: { reachable: true } } };
    if (request.path === '/api/bridge/config') {
      // RFC 6750 §3: a bad bearer token is a 401.
      if (request.headers.authorization !== `Bearer ${TOKEN}`) return { status: 401, headers: date, body: { error: { code: 'unauthorized', message: 'bad token' } } };
      const answer = configAnswer();
      return answer === 'hang-up' ? answer : { ...answer, headers: { ...date, ...answer.headers } };
    }
    return { status: 404, headers: date, body: { error: { code: 'not_found' } } };
  });
});

afterEach(async () => {
  await closePort(held);
  held = undefined;
  await stopPtyPair(socat);
  socat = undefined;
  await server?.close();
  await cleanup();
});

const options = (over: Partial<DoctorOptions> = {}): DoctorOptions => ({
  server: server!.url,
  token: TOKEN,
  spoolDir: join(dir, 'spool'),
  instruments: [],
  ...over,
});
const byName = (checks: Check[], start: string) => {
  const check = checks.find((c) => c.name.startsWith(start));
  if (!check) throw new Error(`no check "${start}" in\n${formatChecks(checks)}`);
  return check;
};

async function ptyPair() {
  const a = join(dir, 'analyzer');
  const b = join(dir, 'bridge');
  socat = await startPtyPair(a, b);
  return { analyzer: a, bridge: b };
}

describe('bridge doctor', () => {
  it('passes every check with a good token, a reachable server, a writable spool and a pty that opens', async () => {
    const { bridge } = await ptyPair();
    const checks = await runDoctor(options({ instruments: [{ code: 'crp-reader', dialect: 'plain-printout', source: `serial:${bridge}` }] }));
    expect(checks.map((c) => [c.name.replace(dir, 'DIR').replace(server!.url, 'URL'), c.ok])).toEqual([
      ['server URL', true],
      ['clock', true],
      ['bridge token', true],
      ['spool DIR/spool', true],
      ['crp-reader serial:DIR/bridge', true],
    ]);
    expect(byName(checks, 'server').detail).toBe('answers (Benchwire 9.9.9)');
    expect(byName(checks, 'bridge token').detail).toBe('accepted (bridge "Lab PC")');
    expect(byName(checks, 'crp-reader').detail).toBe('opens for reading and writing');
    expect(formatChecks(checks)).toMatch(/^OK {3}server .*\ndoctor: all 5 checks passed\n$/s);
  });

  it('names a refused token and says where the token goes', async () => {
    const checks = await runDoctor(options({ token: 'bw_revoked' }));
    const token = byName(checks, 'bridge token');
    expect(token).toMatchObject({ ok: false, detail: 'refused by the server (HTTP 401)' });
    expect(token.fix).toMatch(/Admin → Bridges.*BENCHWIRE_BRIDGE_TOKEN/);
    expect(formatChecks(checks)).toMatch(/^FAIL bridge token: refused by the server \(HTTP 401\) → /m);
    expect(formatChecks(checks)).toMatch(/doctor: 1 of 4 checks failed\n$/);
  });

  it('fails a missing device path and a path that is not a device, with a hint to list the ports', async () => {
    const notDevice = join(dir, 'plain-file');
    await writeFile(notDevice, 'x');
    const checks = await runDoctor(
      options({
        program: 'node bridge.cjs',
        instruments: [
          { code: 'gone', dialect: 'plain-printout', source: `serial:${join(dir, 'ttyUSB7')}` },
          { code: 'file', dialect: 'plain-printout', source: `serial:${notDevice}` },
        ],
      }),
    );
    expect(byName(checks, 'gone')).toMatchObject({ ok: false, detail: 'no such device' });
    expect(byName(checks, 'gone').fix).toMatch(/`node bridge\.cjs ports` lists the serial ports/);
    expect(byName(checks, 'file')).toMatchObject({ ok: false, detail: 'is not a serial device (not a character device)' });
  });

  it('fails a port another program holds (serialport locks what it opens, TIOCEXCL/flock on Linux)', async () => {
    const { bridge } = await ptyPair();
    held = await openAnalyzerEnd(bridge);
    const checks = await runDoctor(options({ instruments: [{ code: 'crp-reader', dialect: 'plain-printout', source: `serial:${bridge}` }] }));
    const port = byName(checks, 'crp-reader');
    expect(port.ok).toBe(false);
    expect(port.detail).toMatch(/^in use by another program \(.*lock/i);
  });

  it('fails the clock when the server is ten minutes ahead', async () => {
    serverDate = () => new Date(Date.now() + 10 * 60_000).toUTCString();
    const clock = byName(await runDoctor(options()), 'clock');
    expect(clock.ok).toBe(false);
    const [, seconds] = /^this PC's clock is (\d+\.\d) s behind the server's/.exec(clock.detail) ?? [];
    // 600 s, give or take the Date header's whole second and the round trip.
    expect(Math.abs(Number(seconds) - 600)).toBeLessThanOrEqual(1.5);
    expect(clock.fix).toMatch(/timedatectl set-ntp true/);
  });

  it('says the server, and so the clock and token, could not be checked when nothing listens', async () => {
    const checks = await runDoctor(options({ server: `http://127.0.0.1:${await freePort()}` }));
    expect(checks.slice(0, 3).map((c) => [c.ok, c.detail.replace(/\(.*\)/, '(…)')])).toEqual([
      [false, 'no answer (…)'],
      [false, 'not checked: the server did not answer'],
      [false, 'not checked: the server did not answer'],
    ]);
    expect(checks[0].detail).toMatch(/ECONNREFUSED/);
  });

  it('fails a spool another bridge holds, naming its pid', async () => {
    const spool = join(dir, 'spool');
    const release = lockStore(spool, 'a bridge');
    try {
      const check = byName(await runDoctor(options()), 'spool');
      expect(check).toMatchObject({ ok: false, detail: `in use by a bridge (pid ${process.pid} on ${(await import('node:os')).hostname()})` });
    } finally {
      release();
    }
  });

  it("checks the serial ports the server lists, and falls back to the spool's copy of its config", async () => {
    const { bridge } = await ptyPair();
    const serial = { kind: 'serial', path: bridge, baudRate: 9600, dataBits: 8, parity: 'none', stopBits: 1 };
    const config = { version: 'v2', instruments: [{ code: 'chem-1', dialect: 'plain-printout', connection: serial }] };
    configAnswer = () => ({ status: 200, body: config });
    let checks = await runDoctor(options({ configFromServer: true }));
    expect(byName(checks, 'instruments')).toMatchObject({ ok: true, detail: 'chem-1 from the server' });
    expect(byName(checks, 'chem-1 serial:')).toMatchObject({ ok: true });

    // Token refused: the ports are still checked from the copy `bridge run` keeps (config-sync.ts).
    await writeFile(join(dir, 'spool', CONFIG_CACHE_FILE), JSON.stringify({ config }));
    checks = await runDoctor(options({ configFromServer: true, token: 'bw_wrong' }));
    expect(byName(checks, 'instruments')).toMatchObject({ ok: true, detail: "chem-1 from the spool's copy of the server's last config" });
    expect(byName(checks, 'chem-1 serial:')).toMatchObject({ ok: true });
  });

  it('fails when the server lists no instrument for this bridge', async () => {
    const check = byName(await runDoctor(options({ configFromServer: true })), 'instruments');
    expect(check).toMatchObject({ ok: false, detail: 'none to read from the server' });
  });
});

describe('clock offset from a Date header', () => {
  // RFC 9110 §6.6.1: Date is the time the answer was made, in whole seconds (IMF-fixdate).
  it('takes the middle of the second and of the round trip', () => {
    // Asked at 12:00:00.600, answered at 12:00:00.800 (PC clock); the server says 12:00:00 (truncated).
    const t = Date.parse('2026-12-02T12:00:00Z');
    expect(clockOffset({ serverDate: t, sentAt: t + 600, answeredAt: t + 800 })).toEqual({ offsetMs: -200, uncertaintyMs: 600 });
  });

  it('passes at the limit plus the uncertainty and fails beyond it', () => {
    const t = Date.parse('2026-12-02T12:00:00Z');
    // offset = t + 500 - (t - 5100) = 5600 = 5000 + 600 (uncertainty with a 200 ms round trip): still within.
    expect(clockCheck({ serverDate: t, sentAt: t - 5200, answeredAt: t - 5000 }, 5_000).ok).toBe(true);
    expect(clockCheck({ serverDate: t, sentAt: t - 5201, answeredAt: t - 5001 }, 5_000)).toMatchObject({ ok: false, detail: expect.stringMatching(/^this PC's clock is 5\.6 s behind/) });
    expect(clockCheck({ serverDate: t, sentAt: t + 6200, answeredAt: t + 6200 }, 5_000)).toMatchObject({ ok: false, detail: expect.stringMatching(/^this PC's clock is 5\.7 s ahead of/) });
  });
});

describe('groupName', () => {
  // group(5): group_name:password:GID:user_list, one group a line.
  it('finds the group of a device by its gid', () => {
    const etcGroup = 'root:x:0:\ntty:x:5:\ndialout:x:20:lab\nbenchwire-bridge:x:998:\n';
    expect(groupName(20, etcGroup)).toBe('dialout');
    expect(groupName(0, etcGroup)).toBe('root');
    expect(groupName(21, etcGroup)).toBeUndefined();
    expect(groupName(5, 'broken line\n::5:\n')).toBeUndefined();
  });
});

describe('doctor on network sources', () => {
  it('tcp:// passes when the adapter accepts a connection and fails when nothing listens', async () => {
    const adapter = await startTestServer(() => ({ status: 200 }));
    const closed = await freePort();
    try {
      const checks = await runDoctor(
        options({
          instruments: [
            { code: 'chem', dialect: 'astm-e1394', source: `tcp://127.0.0.1:${adapter.port}` },
            { code: 'gone', dialect: 'astm-e1394', source: `tcp://127.0.0.1:${closed}` },
          ],
        }),
      );
      expect(byName(checks, 'chem tcp://')).toMatchObject({ ok: true, detail: 'accepts a connection' });
      expect(byName(checks, 'gone tcp://')).toMatchObject({ ok: false, detail: expect.stringMatching(/^does not accept a connection \(.*ECONNREFUSED/) });
    } finally {
      await adapter.close();
    }
  });

  it('tcp-listen:// passes on a free port and fails on one another program listens on', async () => {
    const busy = await startTestServer(() => ({ status: 200 }));
    const free = await freePort();
    try {
      const checks = await runDoctor(
        options({
          instruments: [
            { code: 'hema', dialect: 'hl7v2', source: `tcp-listen://127.0.0.1:${free}` },
            { code: 'taken', dialect: 'hl7v2', source: `tcp-listen://127.0.0.1:${busy.port}` },
          ],
        }),
      );
      expect(byName(checks, 'hema tcp-listen://')).toMatchObject({ ok: true, detail: 'free to listen on' });
      expect(byName(checks, 'taken tcp-listen://')).toMatchObject({ ok: false, detail: 'another program listens there' });
    } finally {
      await busy.close();
    }
  });
});
