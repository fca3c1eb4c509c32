// Server memory under hostile uploads: 100 MB bodies streamed (chunked, no Content-Length) at the real
// server (production build) on a fresh demo clinic, one at a time and three at once, to sign-in (16 KB
// limit, nobody signed in) and to the bridge route (2 MB limit, with a bridge token). The bar: no
// hostile request grows the server past 400 MB. RSS is sampled from /proc every 20 ms while the bodies
// stream; each figure sits beside the server's idle RSS from the same run.
import http from 'node:http';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { rssMB, type Report } from './report';
import { startServer } from './server';

const MB = 1024 * 1024;
const CHUNK = Buffer.alloc(MB, 0x61); // "aaaa…": not JSON, so nothing past the limit would parse anyway

interface Sent {
  status: number | 'reset';
  /** What the client had written when the answer (or the reset) came. */
  sentMB: number;
}

/** Streams `total` bytes at path, writing while the socket takes them, until the server answers or cuts it. */
function streamBody(url: string, pathname: string, total: number, headers: Record<string, string>): Promise<Sent> {
  return new Promise((resolve) => {
    let written = 0;
    let done = false;
    const finish = (status: Sent['status']) => {
      if (done) return;
      done = true;
      resolve({ status, sentMB: written / MB });
      request.destroy();
    };
    const request = http.request(`${url}${pathname}`, { method: 'POST', headers: { 'content-type': 'application/json', ...headers } }, (response) => {
      response.resume();
      finish(response.statusCode ?? 0);
    });
    request.on('error', () => finish('reset'));
    const pump = () => {
      while (!done && written < total) {
        written += CHUNK.length;
        if (!request.write(CHUNK)) return void request.once('drain', pump);
      }
      if (!done) request.end();
    };
    pump();
  });
}

async function peakWhile<T>(pid: number, work: Promise<T>): Promise<{ result: T; peak: number }> {
  let peak = rssMB(pid);
  const timer = setInterval(() => (peak = Math.max(peak, rssMB(pid))), 20);
  try {
    const result = await work;
    return { result, peak: Math.max(peak, rssMB(pid)) };
  } finally {
    clearInterval(timer);
  }
}

export async function benchUploads(report: Report, sizeMB = 100): Promise<void> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-bench-uploads-'));
  const server = await startServer(dataDir, ['--seed-demo']);
  try {
    const pid = server.child.pid ?? 0;
    const token = fs.readFileSync(path.join(dataDir, 'demo-bridge-token'), 'utf8').trim();
    await new Promise((resolve) => setTimeout(resolve, 3000));
    const idle = rssMB(pid);
    const row = (name: string, peak: number, sent: Sent[]) =>
      report.add({
        section: 'memory',
        name: `server RSS peak: ${name} (+${(peak - idle).toFixed(0)} MB over idle; answered ${[...new Set(sent.map((s) => s.status))].join('/')}, ${Math.max(...sent.map((s) => s.sentMB)).toFixed(0)} MB written before it)`,
        value: peak,
        unit: 'MB',
        baseline: 'idle after start',
        baselineValue: idle,
        target: '< 400 MB',
        met: peak < 400,
      });
    const total = sizeMB * MB;
    let run = await peakWhile(pid, streamBody(server.url, '/api/auth/sign-in', total, {}).then((s) => [s]));
    row(`one ${sizeMB} MB body to sign-in`, run.peak, run.result);
    run = await peakWhile(pid, Promise.all([0, 1, 2].map(() => streamBody(server.url, '/api/auth/sign-in', total, {}))));
    row(`three ${sizeMB} MB bodies to sign-in at once`, run.peak, run.result);
    run = await peakWhile(pid, streamBody(server.url, '/api/bridge/readings', total, { authorization: `Bearer ${token}` }).then((s) => [s]));
    row(`one ${sizeMB} MB body to the bridge route (token)`, run.peak, run.result);
    await new Promise((resolve) => setTimeout(resolve, 5000));
    const after = rssMB(pid);
    report.add({ section: 'memory', name: 'server RSS 5 s after the hostile uploads', value: after, unit: 'MB', baseline: 'idle after start', baselineValue: idle, target: '< 400 MB', met: after < 400 });
    const health = await fetch(`${server.url}/api/health`);
    if (!health.ok) report.notes.push(`after the hostile uploads /api/health answered ${health.status}`);
  } finally {
    await server.stop();
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}
