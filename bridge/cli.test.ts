import { spawn } from 'node:child_process';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { bridgeBatchSchema } from '../lib/validation/readings';
import { runOptions } from './cli';
import { UsageError } from './config';
import { createReader } from './simulator/printouts';
import { runSimulator } from './simulator/simulate';
import { Spool } from './spool';
import { testSession } from './testing/astm';
import { VECTORS } from './testing/vectors';
import { tempDir } from './testing/payloads';
import { keyStore, startTestServer, type TestServer } from './testing/server';

// The CLI as a person or npm start runs it: a child process, arguments in, JSON lines or logs out.
// Expected parse output is the reviewed fixture mixed.expected.jsonl (the format is our own).

const root = new URL('..', import.meta.url).pathname;
const fixture = (name: string) => join(root, 'bridge', 'fixtures', 'plain-printout', name);

interface Run {
  status: number | null;
  stdout: string;
  stderr: string;
}

// npx does not pass SIGTERM on to its child; npm start runs the tsx binary directly, and so does `run` here.
const TSX = join(root, 'node_modules', '.bin', 'tsx');

function cli(args: string[], options: { input?: string; env?: Record<string, string>; direct?: boolean } = {}) {
  const [command, prefix] = options.direct ? [TSX, []] : ['npx', ['tsx']];
  const child = spawn(command, [...prefix, 'bridge/cli.ts', ...args], {
    cwd: root,
    env: { ...process.env, TZ: 'Europe/Berlin', ...options.env },
    stdio: ['pipe', 'pipe', 'pipe'],
  });
  let stdout = '';
  let stderr = '';
  child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
  child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  child.stdin.end(options.input ?? '');
  const finished = new Promise<Run>((resolve) => child.on('close', (status) => resolve({ status, stdout, stderr })));
  return { child, finished };
}

describe('bridge cli parse', () => {
  it('prints one JSON object per reading or fragment for a capture file', async () => {
    const { status, stdout } = await cli(['parse', '--dialect', 'plain-printout', fixture('mixed.txt')]).finished;
    expect(status).toBe(0);
    expect(stdout).toBe(await readFile(fixture('mixed.expected.jsonl'), 'utf8'));
  });

  it('reads stdin when given - and defaults to plain-printout', async () => {
    const input = await readFile(fixture('mixed.txt'), 'utf8');
    const { status, stdout } = await cli(['parse', '-'], { input }).finished;
    expect(status).toBe(0);
    expect(stdout).toBe(await readFile(fixture('mixed.expected.jsonl'), 'utf8'));
  });

  it('exits 2 with a clear message for bad arguments', async () => {
    const results = await Promise.all([
      cli(['parse', '--dialect', 'nope', fixture('mixed.txt')]).finished,
      cli(['parse', '--colour']).finished,
      cli(['parse', join(root, 'bridge', 'no-such-capture.txt')]).finished,
      cli(['simulate', '--every', 'soon']).finished,
    ]);
    expect(results.map((r) => r.status)).toEqual([2, 2, 2, 2]);
    expect(results[0].stderr).toMatch(/unknown dialect "nope" \(known: plain-printout/);
    expect(results[1].stderr).toMatch(/Unknown option '--colour'/);
    expect(results[2].stderr).toMatch(/cannot read .*no-such-capture\.txt/);
    expect(results[3].stderr).toMatch(/--every must be a number of seconds/);
    expect(results.every((r) => r.stdout === '')).toBe(true);
  });
});

describe('bridge cli parse for every dialect', () => {
  let dir: string;
  let cleanup: () => Promise<void>;
  beforeEach(async () => {
    ({ dir, cleanup } = await tempDir());
  });
  afterEach(() => cleanup());

  // Inputs built from the standards (bridge/testing/astm.ts for E1381 frames, HL7 v2.5 segments) and our profile format.
  it('prints readings and fragments for ASTM, HL7 and a printout profile', async () => {
    const astm = join(dir, 'chem.bin');
    await writeFile(astm, testSession(['H|\\^&|||SIM^1^SN-7', 'O|1|S-1', 'R|1|^^^GLU|5.2|mmol/L||N||F', 'L|1|N']));
    const hl7 = Buffer.concat([Buffer.from([0x0b]), Buffer.from('MSH|^~\\&|A|B|||20261201140500||ORU^R01|M1|P|2.5\rOBR|1||S-2\rOBX|1|NM|WBC||12.4|10*9/L\r'), Buffer.from([0x1c, 0x0d])]);
    const profile = join(dir, 'profile.json');
    await writeFile(profile, JSON.stringify({ key: 'k', version: 1, definition: { analyzer: 'Invented', record: { end: '^END$' }, fields: [{ label: 'v', pattern: '^SDMA (?<value>\\d+)$' }], analyte: 'SDMA', unit: 'ug/dL' } }));
    const badProfile = join(dir, 'bad.json');
    await writeFile(badProfile, JSON.stringify({ analyzer: 'x', record: {}, fields: [] }));
    const [a, h, p, bad] = await Promise.all([
      cli(['parse', '--dialect', 'astm-e1394', astm]).finished,
      cli(['parse', '--dialect', 'hl7v2', '-'], { input: hl7.toString('latin1') }).finished,
      cli(['parse', '--profile', profile, '-'], { input: 'SDMA 14\nEND\nnoise\n' }).finished,
      cli(['parse', '--profile', badProfile, '-']).finished,
    ]);
    const lines = (run: Run) => run.stdout.trim().split('\n').map((line) => JSON.parse(line));
    expect(a.status).toBe(0);
    expect(lines(a)).toEqual([expect.objectContaining({ kind: 'reading', analyte: 'GLU', value: 5.2, sampleId: 'S-1', instrumentSerial: 'SN-7' })]);
    expect(lines(h)).toEqual([expect.objectContaining({ kind: 'reading', analyte: 'WBC', value: 12.4, sampleId: 'S-2' })]);
    expect(lines(p)).toEqual([
      expect.objectContaining({ kind: 'reading', analyte: 'SDMA', value: 14, unit: 'ug/dL', raw: 'SDMA 14\nEND\n' }),
      { kind: 'unparsed', raw: 'noise\n', reason: 'record cut short: input ended before the end line' },
    ]);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/profile .*bad\.json: record: Say how a record is told apart/);
  });
});

describe('bridge cli run options', () => {
  const env = { BENCHWIRE_SERVER: 'http://127.0.0.1:3000', BENCHWIRE_BRIDGE_TOKEN: 'bwb_env' };

  it('takes one instrument from flags, with the environment as defaults', async () => {
    const options = await runOptions(
      { instrument: 'crp-reader', source: 'serial:/dev/ttyUSB0', baud: '19200', parity: 'even', 'data-bits': '7', spool: '/tmp/s' },
      env,
    );
    expect(options).toEqual({
      server: 'http://127.0.0.1:3000',
      token: 'bwb_env',
      spoolDir: '/tmp/s',
      instruments: [{ code: 'crp-reader', source: 'serial:/dev/ttyUSB0', dialect: 'plain-printout', encoding: undefined, serial: { baudRate: 19200, parity: 'even', dataBits: 7 } }],
    });
  });

  it('takes the instruments from the server when none are given', async () => {
    expect(await runOptions({ spool: '/tmp/s' }, env)).toEqual({ server: 'http://127.0.0.1:3000', token: 'bwb_env', spoolDir: '/tmp/s', instruments: [], configFromServer: true });
    await expect(runOptions({ 'config-from-server': true, dialect: 'hl7v2' }, env)).rejects.toThrow(/--dialect does not go with --config-from-server/);
  });

  it('refuses settings that cannot work', async () => {
    await expect(runOptions({ source: 'tcp://127.0.0.1:4001' }, env)).rejects.toThrow(UsageError);
    await expect(runOptions({ instrument: 'x', source: 'serial:/dev/ttyS0', 'stop-bits': '3' }, env)).rejects.toThrow(/--stop-bits/);
    await expect(runOptions({ instrument: 'x', source: 'tcp://h:1', baud: '9600' }, env)).rejects.toThrow(/only apply to a serial: source/);
    await expect(runOptions({ instrument: 'x', source: 'serial:/dev/ttyS0' }, {})).rejects.toThrow(/no server/);
  });
});

describe('bridge cli run', () => {
  let dir: string;
  let cleanup: () => Promise<void>;
  let server: TestServer;

  beforeEach(async () => {
    ({ dir, cleanup } = await tempDir());
  });
  afterEach(async () => {
    await server?.close();
    await cleanup();
  });

  it('reads a TCP adapter, posts what it captured, and stops cleanly on SIGTERM', async () => {
    // Three slips; a printer notice before one is a record of its own.
    const reader = createReader({ seed: 20 });
    const expected = Array.from({ length: 3 }, () => reader.next()).reduce((sum, slip) => sum + (slip.notice ? 2 : 1), 0);
    const store = keyStore();
    let posted: () => void = () => {};
    const allPosted = new Promise<void>((resolve) => (posted = resolve));
    server = await startTestServer((request) => {
      if (request.path === '/api/bridge/heartbeat') return { status: 200, body: { ok: true } };
      const answer = store.answer(bridgeBatchSchema.parse(request.body));
      if (store.ids.size >= expected) posted();
      return { status: 200, body: answer };
    });

    // The simulated reader plays the adapter; it holds its first slip until the bridge connects.
    let ready: (port: number) => void = () => {};
    const listening = new Promise<number>((resolve) => (ready = resolve));
    const stopSimulator = new AbortController();
    const simulator = runSimulator({
      target: { kind: 'listen', port: 0, waitForClient: true },
      seed: 20,
      count: 3,
      everyMs: 0,
      signal: stopSimulator.signal,
      onReady: ({ port }) => ready(port ?? 0),
    });
    const port = await listening;

    const spoolDir = join(dir, 'spool');
    const bridge = cli(['run', '--server', server.url, '--instrument', 'crp-reader', '--source', `tcp://127.0.0.1:${port}`, '--spool', spoolDir], {
      env: { BENCHWIRE_BRIDGE_TOKEN: 'bwb_cli-test' },
      direct: true,
    });
    await allPosted;
    await simulator;
    bridge.child.kill('SIGTERM');
    const { status, stdout } = await bridge.finished;

    expect(status).toBe(0);
    expect(server.requests.find((r) => r.path === '/api/bridge/readings')?.headers.authorization).toBe('Bearer bwb_cli-test');
    // One log line per capture and per upload.
    expect(stdout.match(/ info {2}crp-reader: captured /g)).toHaveLength(expected);
    expect(stdout).toMatch(/ info {2}upload: \d+ record\(s\) confirmed/);
    expect(stdout).toMatch(/bridge: SIGTERM, stopping/);
    expect(store.ids.size).toBe(expected);
    const spool = await Spool.open(spoolDir);
    expect(spool.pending()).toEqual([]);
    await spool.close();
  });
});

describe('bridge cli parse: vectors from the standards', () => {
  let dir: string;
  let cleanup: () => Promise<void>;
  beforeEach(async () => {
    ({ dir, cleanup } = await tempDir());
  });
  afterEach(() => cleanup());

  // The vectors of bridge/testing/vectors.ts (each names its clause) through `bridge parse`, as a file
  // replay: numbers, words and codes, HL7 batches and character sets, and the E1381 link corners (a
  // frame-number gap, a frame before ENQ, a damaged frame and its repeat). bridge/vectors-live.test.ts
  // sends the same bytes over a live TCP link.
  it('reads every vector as the standards define it', async () => {
    const lines = (run: Run) => run.stdout.trim().split('\n').filter(Boolean).map((line) => JSON.parse(line));
    // A few at a time: each is a child process, and the machine is shared.
    for (let at = 0; at < VECTORS.length; at += 3) {
      const batch = VECTORS.slice(at, at + 3);
      const runs = await Promise.all(
        batch.map(async (vector, i) => {
          const file = join(dir, `vector-${at + i}.bin`);
          await writeFile(file, vector.bytes);
          const flags = vector.decimalMark ? ['--decimal-mark', vector.decimalMark] : [];
          return cli(['parse', '--dialect', vector.dialect, ...flags, file], { direct: true }).finished;
        }),
      );
      batch.forEach((vector, i) => {
        expect(runs[i].status, `${vector.name}: ${runs[i].stderr}`).toBe(0);
        expect(lines(runs[i]), vector.name).toEqual(vector.replay);
      });
    }
  }, 300_000);
});
