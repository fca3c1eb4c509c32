// Figures taken against the real server (server.ts, production build) on a copy of the loaded data set:
// start-up, read paths over HTTP, ingest through POST /api/bridge/readings (one and four bridges),
// WebSocket fan-out to 200 clients, the last printed byte to the WebSocket over a socat pseudo-terminal
// with serialport's real binding and the real bridge, first-load JS per page, RSS of server and bridge,
// and the requests an open Intake tab makes for one 200-record batch.
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import zlib from 'node:zlib';
import { WebSocket } from 'ws';
import { createReader } from '@/bridge/simulator/printouts';
import { closePort, openAnalyzerEnd, startPtyPair, stopPtyPair } from '@/bridge/testing/pty';
import { freePort } from '@/bridge/testing/server';
import { HEAVY_PATIENT } from './dataset';
import { BATCH, benchBatch } from './database';
import { readPaths } from './paths';
import { ms, now, percentile, rssMB, type Report } from './report';
import { SERVER_NODE_FLAGS } from '@/lib/server-flags';

const root = process.cwd();
const sleep = (t: number) => new Promise((r) => setTimeout(r, t));

export interface Server {
  url: string;
  port: number;
  child: ChildProcess;
  startMs: number;
  output: () => string;
  stop(): Promise<void>;
}

/** server.ts under node with tsx's loader directly, so the child's pid is the server's own (for RSS). */
export async function startServer(dataDir: string, args: string[] = []): Promise<Server> {
  const port = await freePort();
  const env = { ...process.env, PORT: String(port), DATA_DIR: dataDir, HOST: '127.0.0.1', NODE_ENV: 'production' as const, NEXT_TELEMETRY_DISABLED: '1', TSX_TSCONFIG_PATH: 'tsconfig.server.json' };
  const t = now();
  const child = spawn(process.execPath, [...SERVER_NODE_FLAGS, '--import', 'tsx', 'server.ts', ...args], { cwd: root, env, stdio: ['ignore', 'pipe', 'pipe'] });
  let output = '';
  child.stdout?.on('data', (d) => (output += d));
  child.stderr?.on('data', (d) => (output += d));
  const url = `http://127.0.0.1:${port}`;
  const deadline = Date.now() + 180_000;
  for (;;) {
    if (child.exitCode !== null) throw new Error(`the server exited:\n${output}`);
    if (Date.now() > deadline) throw new Error(`the server did not answer within 180 s:\n${output}`);
    try {
      if ((await fetch(`${url}/api/health`)).ok) break;
    } catch {
      // not listening yet
    }
    await sleep(50);
  }
  const startMs = ms(t);
  return {
    url,
    port,
    child,
    startMs,
    output: () => output,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
        setTimeout(() => child.kill('SIGKILL'), 10_000).unref();
      }),
  };
}

/** Like Promise.all, but waits for every member before failing, so none is left unhandled. */
async function settleAll<T>(promises: Promise<T>[]): Promise<T[]> {
  const settled = await Promise.allSettled(promises);
  const failed = settled.find((s): s is PromiseRejectedResult => s.status === 'rejected');
  if (failed) throw failed.reason;
  return settled.map((s) => (s as PromiseFulfilledResult<T>).value);
}

export async function signIn(url: string, email: string): Promise<string> {
  const response = await fetch(`${url}/api/auth/sign-in`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email, password: 'demo-only-pass' }) });
  if (!response.ok) throw new Error(`sign-in failed: ${response.status} ${await response.text()}`);
  const cookie = response.headers.getSetCookie().find((c) => c.startsWith('benchwire_session='));
  if (!cookie) throw new Error('sign-in set no session cookie');
  return cookie.split(';')[0];
}

/** Request times; `handler` (when given) collects each answer's Server-Timing handler duration. */
async function timed(url: string, cookie: string, count: number, handler?: number[]): Promise<number[]> {
  const times: number[] = [];
  for (let i = 0; i < count; i++) {
    const t = now();
    const response = await fetch(url, { headers: { cookie } });
    await response.arrayBuffer();
    if (!response.ok) throw new Error(`${url}: HTTP ${response.status}`);
    times.push(ms(t));
    const dur = Number(/handler;dur=([\d.]+)/.exec(response.headers.get('server-timing') ?? '')?.[1]);
    if (handler && Number.isFinite(dur)) handler.push(dur);
  }
  return times;
}

async function postBatch(url: string, token: string, batch: unknown): Promise<void> {
  const response = await fetch(`${url}/api/bridge/readings`, { method: 'POST', headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' }, body: JSON.stringify(batch) });
  const text = await response.text();
  if (!response.ok) throw new Error(`ingest: HTTP ${response.status} ${text.slice(0, 300)}`);
}

/** Readings a live message announces: one id, or a batch's ids. */
export function announced(message: { type?: string; id?: string; ids?: string[] }, type = 'reading.created'): number {
  if (message.type !== type) return 0;
  return Array.isArray(message.ids) ? message.ids.length : 1;
}

function openClients(server: Server, cookie: string, count: number): Promise<WebSocket[]> {
  return Promise.all(
    Array.from({ length: count }, () => new Promise<WebSocket>((resolve, reject) => {
      const ws = new WebSocket(`ws://127.0.0.1:${server.port}/api/live`, { headers: { cookie } });
      ws.once('message', () => resolve(ws)); // the hello
      ws.once('error', reject);
    })),
  );
}

/** Latency from sending a batch to each client hearing all of its readings. */
async function fanOut(server: Server, cookie: string, token: string, clients: number, batches: number, prefix: string) {
  const sockets = await openClients(server, cookie, clients);
  const latencies: number[] = [];
  let deliveries = 0;
  for (let n = 0; n < batches; n++) {
    const t = now();
    const heard = sockets.map((ws) => new Promise<void>((resolve) => {
      let got = 0;
      const onMessage = (data: Buffer) => {
        const count = announced(JSON.parse(String(data)));
        got += count;
        deliveries += count;
        if (got >= BATCH) {
          ws.off('message', onMessage);
          latencies.push(ms(t));
          resolve();
        }
      };
      ws.on('message', onMessage);
    }));
    await postBatch(server.url, token, benchBatch(prefix, n));
    await Promise.all(heard);
  }
  return { latencies, deliveries, sockets };
}

async function firstLoadJs(server: Server, cookies: { vet: string; admin: string }, pages: string[]) {
  const sizes = new Map<string, number>();
  const gz = (file: string) => {
    if (!sizes.has(file)) sizes.set(file, zlib.gzipSync(fs.readFileSync(path.join(root, '.next', file.replace(/^\/_next\//, '')))).length);
    return sizes.get(file) ?? 0;
  };
  const perPage = new Map<string, Set<string>>();
  for (const page of pages) {
    // The sign-in page is what a signed-out browser loads (signed in, it redirects to Intake).
    const cookie = page === '/sign-in' ? undefined : page.startsWith('/admin') ? cookies.admin : cookies.vet;
    const response = await fetch(`${server.url}${page}`, { headers: cookie ? { cookie } : {}, redirect: 'manual' });
    const html = await response.text();
    if (!response.ok) throw new Error(`${page}: HTTP ${response.status}`);
    // Every script the page loads or preloads, but not Next's legacy polyfills (noModule): a browser
    // that runs ES modules, which is every one Benchwire supports, never downloads them.
    const tags = [...html.matchAll(/<(?:script|link)\b[^>]*>/g)].map((m) => m[0]).filter((tag) => !/\bnoModule\b/i.test(tag));
    const scripts = new Set(tags.flatMap((tag) => [...tag.matchAll(/(?:src|href)="(\/_next\/static\/[^"?]+\.js)[^"]*"/g)].map((m) => m[1])));
    perPage.set(page, scripts);
  }
  const shared = [...perPage.values()].reduce((a, b) => new Set([...a].filter((x) => b.has(x))));
  const sum = (set: Iterable<string>) => [...set].reduce((n, f) => n + gz(f), 0) / 1000;
  return { perPage: [...perPage].map(([page, set]) => ({ page, kB: sum(set) })), sharedKB: sum(shared) };
}

/** One slip at a time through the analyzer's end of a socat pair: last byte written → reading.created heard. */
async function ptyLatency(report: Report, server: Server, cookie: string, token: string, slips: number) {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-bench-pty-'));
  const socat = await startPtyPair(path.join(dir, 'analyzer'), path.join(dir, 'lab-pc'));
  const reader = createReader({ seed: 5 });
  // Result slips without a printer notice: each makes exactly one reading (a failed run or a notice
  // would make an unparsed capture, and the timing below waits for reading.created).
  const texts: string[] = [];
  while (texts.length < slips) {
    const slip = reader.next();
    if (slip.kind === 'result' && slip.notice === null) texts.push(slip.text);
  }
  let bridge: ChildProcess | undefined;
  let analyzer: Awaited<ReturnType<typeof openAnalyzerEnd>> | undefined;
  let labPc: Awaited<ReturnType<typeof openAnalyzerEnd>> | undefined;
  try {
    // Baseline: the same bytes across the same pty pair, read with serialport, no bridge.
    analyzer = await openAnalyzerEnd(path.join(dir, 'analyzer'));
    labPc = await openAnalyzerEnd(path.join(dir, 'lab-pc'));
    const base: number[] = [];
    for (const text of texts.slice(0, 40)) {
      const bytes = Buffer.from(text, 'latin1');
      let got = 0;
      const arrived = new Promise<void>((resolve) => {
        const onData = (d: Buffer) => ((got += d.length), got >= bytes.length && (labPc?.off('data', onData), resolve()));
        labPc?.on('data', onData);
      });
      await new Promise<void>((resolve) => analyzer?.write(bytes, () => analyzer?.drain(() => resolve())));
      const t = now();
      await arrived;
      base.push(ms(t));
    }
    await closePort(labPc);
    labPc = undefined;

    const [ws] = await openClients(server, cookie, 1);
    bridge = spawn(process.execPath, ['--import', 'tsx', 'bridge/cli.ts', 'run', '--server', server.url, '--instrument', 'crp-reader', '--dialect', 'plain-printout', '--source', `serial:${path.join(dir, 'lab-pc')}`, '--spool', path.join(dir, 'spool')], {
      cwd: root,
      env: { ...process.env, BENCHWIRE_BRIDGE_TOKEN: token },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let bridgeOut = '';
    bridge.stdout?.on('data', (d) => (bridgeOut += d));
    bridge.stderr?.on('data', (d) => (bridgeOut += d));
    // Wait until the bridge holds the port: a first slip goes through before timing starts.
    const heardOne = () => new Promise<void>((resolve) => {
      const onMessage = (data: Buffer) => announced(JSON.parse(String(data))) > 0 && (ws.off('message', onMessage), resolve());
      ws.on('message', onMessage);
    });
    const warm = heardOne();
    const deadline = Date.now() + 60_000;
    let done = false;
    void warm.then(() => (done = true));
    while (!done) {
      if (Date.now() > deadline) throw new Error(`the bridge did not deliver a first slip:\n${bridgeOut}`);
      analyzer.write(texts[0]);
      await Promise.race([warm, sleep(2000)]);
    }
    // The warm-up may have sent the first slip more than once: let those readings arrive before timing.
    let lastHeard = Date.now();
    const quiet = (data: Buffer) => announced(JSON.parse(String(data))) > 0 && (lastHeard = Date.now());
    ws.on('message', quiet);
    while (Date.now() - lastHeard < 3000) await sleep(200);
    ws.off('message', quiet);
    const latencies: number[] = [];
    let bridgeRss = 0;
    for (const text of texts.slice(1)) {
      const heard = heardOne();
      await new Promise<void>((resolve) => analyzer?.write(Buffer.from(text, 'latin1'), () => analyzer?.drain(() => resolve())));
      const t = now();
      await heard;
      latencies.push(ms(t));
      bridgeRss = Math.max(bridgeRss, rssMB(bridge.pid ?? 0));
    }
    ws.close();
    const p50 = percentile(base, 50);
    report.add({ section: 'live', name: `last byte → reading.created on a WebSocket p50 (${latencies.length} slips, socat pty, real serialport)`, value: percentile(latencies, 50), unit: 'ms', baseline: 'same bytes across the pty alone p50', baselineValue: p50 });
    report.add({ section: 'live', name: 'last byte → reading.created p99', value: percentile(latencies, 99), unit: 'ms', baseline: 'pty alone p99', baselineValue: percentile(base, 99) });
    return bridgeRss;
  } finally {
    await closePort(labPc);
    await closePort(analyzer);
    if (bridge && bridge.exitCode === null) {
      const exited = new Promise((r) => bridge?.once('exit', r));
      bridge.kill('SIGTERM');
      await exited;
    }
    await stopPtyPair(socat);
    fs.rmSync(dir, { recursive: true, force: true });
  }
}

/** An Intake tab open in chromium: the requests it makes for one 200-record batch and when it settles. */
async function intakeTab(report: Report, server: Server, token: string) {
  const { chromium } = await import('playwright-core');
  const browser = await chromium.launch({ executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium', args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-dev-shm-usage'] });
  try {
    const context = await browser.newContext({ baseURL: server.url });
    const page = await context.newPage();
    await page.goto('/sign-in');
    await page.fill('#email', 'tech@fernhollow.example');
    await page.fill('#password', 'demo-only-pass');
    await page.click('button[type=submit]');
    await page.waitForURL('**/intake', { timeout: 60_000 });
    await page.waitForSelector('[data-live-state=live]', { timeout: 60_000 });
    await page.waitForLoadState('networkidle');
    let requests = 0;
    let lastDone = 0n;
    let pending = 0;
    page.on('request', (r) => r.url().includes('/api/') && (requests++, pending++));
    page.on('requestfinished', (r) => r.url().includes('/api/') && (pending--, (lastDone = now())));
    page.on('requestfailed', (r) => r.url().includes('/api/') && (pending--, (lastDone = now())));
    const t = now();
    await postBatch(server.url, token, benchBatch('tab', 0));
    const postMs = ms(t);
    // Settled: nothing in flight and nothing new for 2 s.
    let seen = -1;
    let quietSince = Date.now();
    while (Date.now() - quietSince < 2000) {
      await sleep(100);
      if (requests !== seen || pending > 0) {
        seen = requests;
        quietSince = Date.now();
      }
    }
    const settled = lastDone > t ? Number(lastDone - t) / 1e6 : postMs;
    report.add({ section: 'live', name: 'open Intake tab: requests for one 200-record batch', value: requests, unit: 'requests', baseline: 'readings in the batch', baselineValue: BATCH, target: 'a handful', met: requests <= 10 });
    report.add({ section: 'live', name: 'open Intake tab: batch posted → tab settled', value: settled, unit: 'ms', baseline: 'the POST itself', baselineValue: postMs, target: '< 1,000 ms', met: settled < 1000 });
  } finally {
    await browser.close();
  }
}

/** BENCH_PARTS=reads,ingest,fanout,pty,pages,tab runs only those parts of the server section. */
const parts = process.env.BENCH_PARTS?.split(',');
const wantPart = (name: string) => !parts || parts.includes(name);

/** One part of the server run; a failure is noted and the other parts still run. */
async function part(report: Report, name: string, run: () => Promise<void>) {
  try {
    await run();
  } catch (error) {
    console.error(`[bench] ${name} failed:`, error);
    report.notes.push(`${name} failed: ${error instanceof Error ? error.message : String(error)}`);
  }
}

export async function benchServer(report: Report, dataDir: string, options: { rawRate: number; sameRowsRate: number; batches: number; fanOutBatches: number; slips: number }) {
  const token = fs.readFileSync(path.join(dataDir, 'demo-bridge-token'), 'utf8').trim();
  // Baseline for start-up: node itself with tsx's loader and nothing else.
  let t = now();
  await new Promise((r) => spawn(process.execPath, ['--import', 'tsx', '-e', ''], { cwd: root, stdio: 'ignore' }).once('exit', r));
  const bareNode = ms(t);
  let server = await startServer(dataDir);
  try {
    report.add({ section: 'start', name: 'cold start → first /api/health answer', value: server.startMs, unit: 'ms', baseline: 'node + tsx, empty script', baselineValue: bareNode });
    await sleep(3000);
    const idleRss = rssMB(server.child.pid ?? 0);
    report.add({ section: 'memory', name: 'server RSS idle after start', value: idleRss, unit: 'MB', baseline: 'target', baselineValue: 400, target: '< 400 MB', met: idleRss < 400 });

    const vet = await signIn(server.url, 'vet@fernhollow.example');
    const heavy = await (await fetch(`${server.url}/api/patients?q=${HEAVY_PATIENT}`, { headers: { cookie: vet } })).json();
    const waiting = await (await fetch(`${server.url}/api/readings/waiting`, { headers: { cookie: vet } })).json();
    const intakePage = (waiting.specimens as { readings: { id: string }[] }[]).flatMap((s) => s.readings.map((r) => r.id));
    const ids = { heavyPatientId: heavy.patients[0].id as string, intakePage };
    report.notes.push(`server read paths: ${waiting.waiting.readings} readings waiting in Intake (${waiting.waiting.specimens} specimens), the data set as built`);
    if (wantPart('reads')) {
    const paths = await readPaths();
    const health = paths.find((p) => p.name === 'health');
    await timed(`${server.url}/api/health`, vet, 5);
    const healthTimes = await timed(`${server.url}${health?.url(ids)}`, vet, 40);
    const healthP95 = percentile(healthTimes, 95);
    for (const p of paths) {
      await timed(`${server.url}${p.url(ids)}`, vet, 3);
      const handler: number[] = [];
      const times = p.name === 'health' ? healthTimes : await timed(`${server.url}${p.url(ids)}`, vet, 40, handler);
      report.add({ section: 'read (HTTP)', name: `${p.name} p50`, value: percentile(times, 50), unit: 'ms', baseline: '/api/health p50', baselineValue: percentile(healthTimes, 50) });
      const p95 = percentile(times, 95);
      report.add({ section: 'read (HTTP)', name: `${p.name} p95`, value: p95, unit: 'ms', baseline: '/api/health p95', baselineValue: healthP95, target: '< 50 ms', met: p95 < 50 });
      // Where the time goes: the route handler itself (queries, evaluation, JSON), the rest is Next and HTTP.
      if (handler.length) report.add({ section: 'read (HTTP)', name: `${p.name}: handler p95 (Server-Timing)`, value: percentile(handler, 95), unit: 'ms', baseline: 'whole request p95', baselineValue: p95 });
    }
    // The chart and the Review list are kept between requests (lib/view-cache.ts), so the rows above are
    // what an unchanged record costs. Worked out again: a comment on the long record's newest result before
    // each request, as when a veterinarian comments and the chart refetches (the comment is not timed).
    const recomputed = paths.filter((p) => p.name === '1,000-result chart' || p.name === 'Review list');
    const chart = await (await fetch(`${server.url}${recomputed[0].url(ids)}`, { headers: { cookie: vet } })).json();
    const newestId = chart.results[0].id as string;
    for (const p of recomputed) {
      const times: number[] = [];
      const handler: number[] = [];
      for (let i = 0; i < 40; i++) {
        const commented = await fetch(`${server.url}/api/readings/${newestId}/reviews`, { method: 'POST', headers: { cookie: vet, 'content-type': 'application/json' }, body: JSON.stringify({ comment: `Bench comment ${i} (invented).` }) });
        if (!commented.ok) throw new Error(`comment: HTTP ${commented.status} ${await commented.text()}`);
        times.push(...(await timed(`${server.url}${p.url(ids)}`, vet, 1, handler)));
      }
      const p95 = percentile(times, 95);
      report.add({ section: 'read (HTTP)', name: `${p.name} after a change (worked out again) p50`, value: percentile(times, 50), unit: 'ms', baseline: '/api/health p50', baselineValue: percentile(healthTimes, 50) });
      report.add({ section: 'read (HTTP)', name: `${p.name} after a change (worked out again) p95`, value: p95, unit: 'ms', baseline: '/api/health p95', baselineValue: healthP95, target: '< 50 ms', met: p95 < 50 });
      report.add({ section: 'read (HTTP)', name: `${p.name} after a change: handler p95 (Server-Timing)`, value: percentile(handler, 95), unit: 'ms', baseline: 'whole request p95', baselineValue: p95 });
    }
    const afterReads = rssMB(server.child.pid ?? 0);
    report.add({ section: 'memory', name: 'server RSS after the read-path run', value: afterReads, unit: 'MB', baseline: 'idle after start', baselineValue: idleRss, target: '< 400 MB', met: afterReads < 400 });
    // What the server keeps once it is quiet again: V8 returns the read paths' garbage some seconds later.
    await sleep(20_000);
    const settled = rssMB(server.child.pid ?? 0);
    report.add({ section: 'memory', name: 'server RSS 20 s after the read-path run (idle)', value: settled, unit: 'MB', baseline: 'right after the run', baselineValue: afterReads, target: '< 400 MB', met: settled < 400 });

}
        if (wantPart('ingest')) {
    // Ingest over HTTP: one bridge, then four at once (each its own token).
    t = now();
    for (let n = 0; n < options.batches; n++) await postBatch(server.url, token, benchBatch('http1', n));
    const oneRate = (options.batches * BATCH) / (ms(t) / 1000);
    report.add({ section: 'ingest (HTTP)', name: `POST /api/bridge/readings, 1 bridge, ${options.batches} × ${BATCH}`, value: oneRate, unit: 'readings/s', baseline: 'raw multi-row INSERT of the readings alone', baselineValue: options.rawRate, target: '≥ 0.7 of raw', met: oneRate / options.rawRate >= 0.7 });
    report.add({ section: 'ingest (HTTP)', name: `POST /api/bridge/readings, 1 bridge, ${options.batches} × ${BATCH}`, value: oneRate, unit: 'readings/s', baseline: 'raw INSERTs of the same rows (specimens, readings, audit rows)', baselineValue: options.sameRowsRate, target: '≥ 0.7 of raw', met: oneRate / options.sameRowsRate >= 0.7 });
    const admin = await signIn(server.url, 'admin@fernhollow.example');
    const tokens = [token];
    for (let i = 0; i < 3; i++) {
      const response = await fetch(`${server.url}/api/admin/bridges`, { method: 'POST', headers: { cookie: admin, 'content-type': 'application/json' }, body: JSON.stringify({ name: `Bench bridge ${i + 2}` }) });
      const body = await response.json();
      if (!response.ok) throw new Error(`creating a bridge: ${JSON.stringify(body)}`);
      tokens.push(body.token);
    }
    const per = Math.max(1, Math.floor(options.batches / 4));
    t = now();
    await settleAll(tokens.map(async (tk, b) => {
      for (let n = 0; n < per; n++) await postBatch(server.url, tk, benchBatch(`http4-${b}`, n));
    }));
    const fourRate = (4 * per * BATCH) / (ms(t) / 1000);
    report.add({ section: 'ingest (HTTP)', name: `4 bridges at once, ${4 * per} × ${BATCH}`, value: fourRate, unit: 'readings/s', baseline: '1 bridge', baselineValue: oneRate, target: 'scales (≥ 1)', met: fourRate / oneRate >= 1 });
    // The matcher weighs every waiting reading together, so its cost grows with the queue: the same request
    // again with the readings just posted still waiting (far more than a clinic's Intake holds).
    const every = (await readPaths()).find((p) => p.name === 'Intake suggestions, every waiting reading');
    if (every) {
      const grown = await (await fetch(`${server.url}/api/readings/waiting`, { headers: { cookie: vet } })).json();
      await timed(`${server.url}${every.url(ids)}`, vet, 3);
      const times = await timed(`${server.url}${every.url(ids)}`, vet, 20);
      report.add({ section: 'read (HTTP)', name: `${every.name}, ${grown.waiting.readings.toLocaleString('en-US')} waiting (queue grown by the ingest above) p95`, value: percentile(times, 95), unit: 'ms', baseline: 'its p50', baselineValue: percentile(times, 50) });
    }

}
        if (wantPart('fanout')) {
    // Fan-out: one client, then 200.
    const single = await fanOut(server, vet, token, 1, options.fanOutBatches, 'fan1');
    for (const ws of single.sockets) ws.close();
    const many = await fanOut(server, vet, token, 200, options.fanOutBatches, 'fan200');
    const expected = 200 * options.fanOutBatches * BATCH;
    const withClients = rssMB(server.child.pid ?? 0);
    report.add({ section: 'live', name: `200-client fan-out: batch sent → all ${BATCH} heard, p99 (${many.deliveries.toLocaleString('en-US')} of ${expected.toLocaleString('en-US')} deliveries)`, value: percentile(many.latencies, 99), unit: 'ms', baseline: '1 client p99', baselineValue: percentile(single.latencies, 99), target: 'all delivered', met: many.deliveries >= expected });
    report.add({ section: 'memory', name: 'server RSS with 200 WebSocket clients', value: withClients, unit: 'MB', baseline: 'idle after start', baselineValue: idleRss });
    for (const ws of many.sockets) ws.close();

}
        if (wantPart('pty')) {
    const bridgeRss = await ptyLatency(report, server, vet, token, options.slips);
    report.add({ section: 'memory', name: 'bridge RSS while streaming (max)', value: bridgeRss, unit: 'MB', baseline: 'server RSS idle', baselineValue: idleRss });

}
        if (wantPart('pages')) await part(report, 'first-load JS', async () => {
    const pages = [
      '/sign-in', '/intake', '/bench', '/patients', `/patients/${ids.heavyPatientId}`, `/patients/${ids.heavyPatientId}/edit`, '/patients/new',
      '/reviews', '/qc', '/change-password', '/admin', '/admin/profiles', '/admin/profiles/new', '/admin/audit',
    ];
    const js = await firstLoadJs(server, { vet, admin: await signIn(server.url, 'admin@fernhollow.example') }, pages);
    for (const { page, kB } of js.perPage) {
      report.add({ section: 'first-load JS', name: page.replace(ids.heavyPatientId, '[patientId]'), value: kB, unit: 'kB gzip', baseline: 'shared by every page', baselineValue: js.sharedKB, target: '< 250 kB', met: kB < 250 });
    }
    });

    if (wantPart('tab')) await part(report, 'Intake tab', () => intakeTab(report, server, token));
  } catch (error) {
    console.error(`[bench] the server said:\n${server.output().slice(-4000)}`);
    throw error;
  } finally {
    await server.stop();
  }
  if (!wantPart('start')) return;
  server = await startServer(dataDir);
  report.add({ section: 'start', name: 'warm start → first /api/health answer', value: server.startMs, unit: 'ms', baseline: 'node + tsx, empty script', baselineValue: bareNode });
  await server.stop();
}
