// The packed bridge (npm run bridge:pack) as a lab PC runs it: plain `node bridge.cjs` in a folder
// outside the checkout with no node_modules anywhere above it, against the app's real bridge routes
// (on the test database), reading a socat pseudo-terminal through the prebuilt serialport binding the
// pack carries. Parse output is checked against the vectors written from the standards
// (bridge/testing/vectors.ts) and the reviewed plain-printout fixture.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { eq } from 'drizzle-orm';
import type { SerialPort } from 'serialport';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { GET as configRoute } from '@/app/api/bridge/config/route';
import { POST as heartbeatRoute } from '@/app/api/bridge/heartbeat/route';
import { POST as readingsRoute } from '@/app/api/bridge/readings/route';
import { GET as worklistRoute } from '@/app/api/bridge/worklist/route';
import { GET as healthRoute } from '@/app/api/health/route';
import { closePort, openAnalyzerEnd, startPtyPair, stopPtyPair } from '@/bridge/testing/pty';
import { VECTORS } from '@/bridge/testing/vectors';
import type { Database } from '@/db/client';
import { readings } from '@/db/schema';
import { packBridge } from '@/scripts/bridge-pack';
import { seededDatabase } from '../helpers/db';
import { serveRoutes } from '../helpers/route-server';

const root = path.resolve(import.meta.dirname, '..', '..');
const version = JSON.parse(fs.readFileSync(path.join(root, 'package.json'), 'utf8')).version as string;

let database: Database;
let token: string;
let app: Awaited<ReturnType<typeof serveRoutes>>;
let work: string;
let labPc: string;
let socat: ChildProcess | undefined;
let analyzer: SerialPort | undefined;
const children: ChildProcess[] = [];

beforeAll(async () => {
  ({ database, bridgeToken: token } = await seededDatabase());
  app = await serveRoutes({
    '/api/health': { GET: healthRoute },
    '/api/bridge/config': { GET: configRoute },
    '/api/bridge/readings': { POST: readingsRoute },
    '/api/bridge/heartbeat': { POST: heartbeatRoute },
    '/api/bridge/worklist': { GET: worklistRoute },
  });
  work = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-pack-'));
  const packed = await packBridge(path.join(work, 'dist'));
  // What is copied to the lab PC: the folder alone.
  labPc = path.join(work, 'lab-pc', 'benchwire-bridge');
  fs.cpSync(packed.dir, labPc, { recursive: true });
  fs.rmSync(packed.dir, { recursive: true });
  const a = path.join(work, 'analyzer-end');
  const b = path.join(work, 'bridge-end');
  socat = await startPtyPair(a, b);
});

afterAll(async () => {
  for (const child of children) if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
  await closePort(analyzer);
  await stopPtyPair(socat);
  await app?.close();
  if (work) fs.rmSync(work, { recursive: true, force: true });
});

interface Run {
  status: number | null;
  stdout: string;
  stderr: string;
}

/** node bridge.cjs ARGS in the lab-PC folder, with an environment that leads to no checkout. */
function packed(args: string[], options: { input?: Buffer | string; env?: Record<string, string> } = {}) {
  const child = spawn(process.execPath, [path.join(labPc, 'bridge.cjs'), ...args], {
    cwd: labPc,
    env: { PATH: process.env.PATH ?? '/usr/bin:/bin', HOME: work, TZ: 'Europe/Berlin', NODE_ENV: 'production', ...options.env },
    stdio: ['pipe', 'pipe', 'pipe'],
  });
  children.push(child);
  let stdout = '';
  let stderr = '';
  child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
  child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  child.stdin.end(options.input ?? '');
  const finished = new Promise<Run>((resolve) => child.on('close', (status) => resolve({ status, stdout, stderr })));
  return { child, finished, output: () => stdout + stderr };
}

const waitFor = async (what: string, probe: () => boolean | Promise<boolean>, log: () => string) => {
  for (let i = 0; i < 2400; i++) {
    if (await probe()) return;
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
  throw new Error(`timed out waiting for ${what}\n${log()}`);
};

describe('the packed bridge', () => {
  it('lives in a folder outside the checkout with no node_modules above it', () => {
    expect(path.relative(root, labPc).startsWith('..')).toBe(true);
    for (let dir = labPc; ; dir = path.dirname(dir)) {
      expect(fs.existsSync(path.join(dir, 'node_modules')), dir).toBe(false);
      if (path.dirname(dir) === dir) break;
    }
    // node-gyp-build's layout: prebuilds/<platform>-<arch>/ beside the bundle (bindings-cpp's own tree).
    expect(fs.readdirSync(path.join(labPc, 'prebuilds', `${process.platform}-${process.arch}`)).some((name) => name.endsWith('.node'))).toBe(true);
  });

  it('tells its version', async () => {
    const run = await packed(['--version']).finished;
    expect(run.status).toBe(0);
    expect(run.stdout).toBe(`Benchwire bridge ${version} (Node ${process.versions.node}, ${process.platform}-${process.arch})\n`);
  });

  it('parses the standards vectors and the printout fixture as the checkout does', async () => {
    const fixture = path.join(root, 'bridge', 'fixtures', 'plain-printout');
    const printout = await packed(['parse', '--dialect', 'plain-printout', '-'], { input: fs.readFileSync(path.join(fixture, 'mixed.txt')) }).finished;
    expect(printout.status, printout.stderr).toBe(0);
    expect(printout.stdout).toBe(fs.readFileSync(path.join(fixture, 'mixed.expected.jsonl'), 'utf8'));
    for (let at = 0; at < VECTORS.length; at += 3) {
      const batch = VECTORS.slice(at, at + 3);
      const runs = await Promise.all(
        batch.map((vector) => packed(['parse', '--dialect', vector.dialect, ...(vector.decimalMark ? ['--decimal-mark', vector.decimalMark] : []), '-'], { input: vector.bytes }).finished),
      );
      batch.forEach((vector, i) => {
        expect(runs[i].status, `${vector.name}: ${runs[i].stderr}`).toBe(0);
        const lines = runs[i].stdout.split('\n').filter(Boolean).map((line) => JSON.parse(line));
        expect(lines, vector.name).toEqual(vector.replay);
      });
    }
  });

  it('doctor: every check passes with the good token on the pty; a bad token and a missing device fail with exit 1', async () => {
    const spool = path.join(work, 'doctor-spool');
    const flags = ['--instrument', 'crp-reader', '--dialect', 'plain-printout', '--spool', spool, '--server', app.url];
    const good = await packed(['doctor', ...flags, '--source', `serial:${path.join(work, 'bridge-end')}`], { env: { BENCHWIRE_BRIDGE_TOKEN: token } }).finished;
    expect(good.status, good.stdout).toBe(0);
    expect(good.stdout.split('\n').filter(Boolean).map((line) => line.slice(0, 4))).toEqual(['OK  ', 'OK  ', 'OK  ', 'OK  ', 'OK  ', 'doct']);
    expect(good.stdout).toMatch(`OK   crp-reader serial:${path.join(work, 'bridge-end')}: opens for reading and writing\n`);
    expect(good.stdout).toMatch(/doctor: all 5 checks passed\n$/);

    const bad = await packed(['doctor', ...flags, '--source', `serial:${path.join(work, 'no-such-tty')}`], { env: { BENCHWIRE_BRIDGE_TOKEN: 'bw_not-a-token' } }).finished;
    expect(bad.status).toBe(1);
    expect(bad.stdout).toMatch(/^FAIL bridge token: refused by the server \(HTTP 401\) → /m);
    expect(bad.stdout).toMatch(new RegExp(`^FAIL crp-reader serial:${path.join(work, 'no-such-tty')}: no such device → .*\`node bridge\\.cjs ports\``, 'm'));
    expect(bad.stdout).toMatch(/doctor: 2 of 5 checks failed\n$/);
  });

  it('runs: a slip printed into the pty is stored by the server; SIGTERM stops it with an empty spool', async () => {
    const spool = path.join(work, 'run-spool');
    const bridge = packed(
      ['run', '--instrument', 'crp-reader', '--dialect', 'plain-printout', '--source', `serial:${path.join(work, 'bridge-end')}`, '--spool', spool, '--server', app.url],
      { env: { BENCHWIRE_BRIDGE_TOKEN: token } },
    );
    await waitFor('the bridge to open the port', () => /crp-reader: reading serial:/.test(bridge.output()), bridge.output);
    analyzer = await openAnalyzerEnd(path.join(work, 'analyzer-end'));
    // An invented CRP slip in the plain-printout format (bridge/fixtures/plain-printout).
    const slip = ['---- RESULT ----', 'TEST      cCRP', 'RESULT    17.5 mg/L', 'SAMPLE    PACK-0001', 'SN        SIM-0001', '---- END ----', '', ''].join('\r\n');
    await new Promise<void>((resolve, reject) => analyzer!.write(slip, (error) => (error ? reject(error) : analyzer!.drain(() => resolve()))));
    const stored = () => database.db.select().from(readings).where(eq(readings.sampleId, 'PACK-0001'));
    await waitFor('the reading in the database', async () => (await stored()).length > 0, bridge.output);
    const [reading] = await stored();
    expect(reading).toMatchObject({ analyte: 'cCRP', unit: 'mg/L', instrumentSerial: 'SIM-0001' });
    expect(Number(reading.value)).toBe(17.5);
    await waitFor('the server to confirm it', () => /upload: 1 record\(s\) confirmed \(1 created, 0 duplicate\), 0 pending/.test(bridge.output()), bridge.output);
    bridge.child.kill('SIGTERM');
    const run = await bridge.finished;
    expect(run.status, bridge.output()).toBe(0);
    expect(bridge.output()).toMatch(/bridge: stopped, 0 record\(s\) waiting in the spool/);
  });

  // Needs root to hand the device to group dialout and run as another user (runuser, util-linux).
  const asRoot = process.getuid?.() === 0 && !spawnSync('runuser', ['--version']).error && spawnSync('getent', ['group', 'dialout']).status === 0;
  it.skipIf(!asRoot)('doctor as a user outside the port\'s group: FAIL naming group dialout; with dialout as a supplementary group (the unit\'s SupplementaryGroups=) OK', async () => {
    const device = path.join(work, 'bridge-end');
    // Debian gives serial devices root:dialout 0660 (udev rules, common practice, no source).
    const pts = fs.realpathSync(device);
    fs.chownSync(pts, 0, Number(spawnSync('getent', ['group', 'dialout'], { encoding: 'utf8' }).stdout.split(':')[2]));
    fs.chmodSync(pts, 0o660);
    fs.chmodSync(work, 0o755);
    const spool = path.join(work, 'nobody-spool');
    fs.mkdirSync(spool, { mode: 0o700 });
    fs.chownSync(spool, 65534, 65534);
    const doctor = (groups: string[]) => {
      const child = spawn('runuser', ['-u', 'nobody', ...groups, '--', process.execPath, path.join(labPc, 'bridge.cjs'), 'doctor', '--instrument', 'crp-reader', '--source', `serial:${device}`, '--spool', spool, '--server', app.url], {
        cwd: '/',
        env: { PATH: process.env.PATH ?? '/usr/bin:/bin', BENCHWIRE_BRIDGE_TOKEN: token, NODE_ENV: 'production' },
      });
      children.push(child);
      let stdout = '';
      child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
      child.stderr.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
      return new Promise<Run>((resolve) => child.on('close', (status) => resolve({ status, stdout, stderr: '' })));
    };
    const outside = await doctor([]);
    expect(outside.status, outside.stdout).toBe(1);
    expect(outside.stdout).toMatch(new RegExp(`^FAIL crp-reader serial:${device}: nobody may not read and write it \\(group dialout, mode 660\\) → add the user to group dialout \\(sudo usermod -aG dialout nobody`, 'm'));
    expect(outside.stdout).toMatch(/doctor: 1 of 5 checks failed\n$/);
    const inside = await doctor(['-G', 'dialout']);
    expect(inside.status, inside.stdout).toBe(0);
    expect(inside.stdout).toMatch(/doctor: all 5 checks passed\n$/);
  });

  it.skipIf(spawnSync('systemd-analyze', ['--version']).error)('carries a systemd unit that systemd-analyze verify finds nothing wrong with', () => {
    const unit = path.join(labPc, 'service', 'benchwire-bridge.service');
    const verify = spawnSync('systemd-analyze', ['verify', unit], { encoding: 'utf8' });
    // verify warns on stderr about unknown keys or bad values and still exits 0 for most of them.
    expect(verify.stderr.split('\n').filter((line) => line.includes('benchwire-bridge.service'))).toEqual([]);
    expect(fs.readFileSync(unit, 'utf8')).toMatch(/^ExecStart=\/usr\/bin\/node \/opt\/benchwire-bridge\/bridge\.cjs run --spool \/var\/lib\/benchwire-bridge\/spool$/m);
  });
});
