import { spawn } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { bridgeBatchSchema } from '../lib/validation/readings';
import { runOptions } from './cli';
import { UsageError } from './config';
import { createReader } from './simulator/printouts';
import { runSimulator } from './simulator/simulate';
import { Spool } from './spool';
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
