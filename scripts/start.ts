// `npm start`: builds if needed, then runs the demo clinic end to end on embedded PGlite:
// the web app with its live feed (migrates and seeds on first start), a local mail sink,
// three simulated analyzers and a real bridge reading them.
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { buildIfNeeded } from './build-if-needed';
import { startMailSink } from './mail-sink';
import { SERVER_NODE_FLAGS } from '../lib/server-flags';

const root = process.cwd();
const port = Number(process.env.PORT ?? 3000);
const dataDir = path.resolve(process.env.DATA_DIR ?? path.join(root, '.data'));
const mailPort = Number(process.env.MAIL_PORT ?? 2525);
const env = { ...process.env, DATA_DIR: dataDir, PORT: String(port), NODE_ENV: 'production' as const };
const bin = (name: string) => path.join(root, 'node_modules', '.bin', name);

async function waitForHealth(timeoutMs: number) {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    try {
      const response = await fetch(`http://127.0.0.1:${port}/api/health`);
      if (response.ok) return;
    } catch {
      // not up yet
    }
    await new Promise((r) => setTimeout(r, 500));
  }
  throw new Error(`the web app did not answer on port ${port} within ${timeoutMs / 1000} s`);
}

const children: ChildProcess[] = [];
function run(name: string, command: string, args: string[], extraEnv: Record<string, string> = {}) {
  const child = spawn(command, args, { stdio: ['ignore', 'inherit', 'inherit'], env: { ...env, ...extraEnv } });
  children.push(child);
  child.on('exit', (code, signal) => {
    if (!stopping) console.error(`[start] ${name} stopped (${signal ?? `exit ${code}`})`);
    if (name === 'web app' && !stopping) stop(1);
  });
  return child;
}

let stopping = false;
function stop(code = 0) {
  stopping = true;
  for (const child of children) child.kill('SIGTERM');
  setTimeout(() => process.exit(code), 3000).unref();
}
process.on('SIGINT', () => stop());
process.on('SIGTERM', () => stop());

async function main() {
  buildIfNeeded(env, '[start]');
  fs.mkdirSync(dataDir, { recursive: true });
  // The sink first, so the app's mail queue finds it; the app sends to it over SMTP like to any server.
  const mailDir = path.join(dataDir, 'mail');
  await startMailSink({ port: mailPort, dir: mailDir });
  run('web app', bin('tsx'), [...SERVER_NODE_FLAGS, '--tsconfig', 'tsconfig.server.json', 'server.ts', '--seed-demo'], {
    SMTP_URL: process.env.SMTP_URL ?? `smtp://127.0.0.1:${mailPort}`,
    // Demo only: the Outbox page reads what the sink kept.
    MAIL_SINK_DIR: mailDir,
    APP_URL: process.env.APP_URL ?? `http://localhost:${port}`,
  });
  await waitForHealth(120_000);

  const tokenFile = path.join(dataDir, 'demo-bridge-token');
  if (!fs.existsSync(tokenFile)) {
    console.warn('[start] no demo bridge token in the data dir (not a demo database?); the simulated analyzer is not started.');
  } else {
    // Three invented analyzers on the seeded instruments' ports, and one real bridge that takes its
    // instruments from the server (GET /api/bridge/config), as a bridge on a lab PC does.
    run('simulated CRP reader', bin('tsx'), ['bridge/cli.ts', 'simulate', '--listen', '4001', '--every', '45', '--wait-for-client']);
    // The chemistry and haematology analyzers run only the tests started for them on the Bench (their worklist).
    const bridgeToken = { BENCHWIRE_BRIDGE_TOKEN: fs.readFileSync(tokenFile, 'utf8').trim() };
    const worklist = ['--worklist-from', `http://127.0.0.1:${port}`];
    run('simulated chemistry analyzer', bin('tsx'), ['bridge/cli.ts', 'simulate', '--kind', 'astm-chemistry', '--listen', '4002', ...worklist, '--instrument', 'chem-analyzer'], bridgeToken);
    run('simulated haematology analyzer', bin('tsx'), ['bridge/cli.ts', 'simulate', '--kind', 'hl7-hematology', '--connect', '127.0.0.1:4003', ...worklist, '--instrument', 'hema-analyzer'], bridgeToken);
    run('bridge', bin('tsx'), ['bridge/cli.ts', 'run', '--config-from-server', '--server', `http://127.0.0.1:${port}`, '--spool', path.join(dataDir, 'bridge-spool')], {
      BENCHWIRE_BRIDGE_TOKEN: fs.readFileSync(tokenFile, 'utf8').trim(),
    });
  }

  console.log(`
  Benchwire demo clinic is running: http://localhost:${port}
    sign in (demo only): tech@fernhollow.example, vet@fernhollow.example or admin@fernhollow.example
                         password: demo-only-pass
    mail sink: smtp://127.0.0.1:${mailPort} (messages kept in ${path.join(dataDir, 'mail')})
    simulated analyzers: CRP printer (tcp 4001), ASTM chemistry (tcp 4002), HL7 haematology (dials 4003),
                         all read by one real bridge with its spool in ${path.join(dataDir, 'bridge-spool')}
  Stop with Ctrl+C.
`);
}

main().catch((error) => {
  console.error('[start]', error instanceof Error ? error.message : error);
  stop(1);
});
