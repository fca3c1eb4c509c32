// Start-up for browser tests: the real server.ts on a free port with its own data dir (demo seed),
// and Debian's chromium through playwright-core. Requires a production build (`npm test` makes one).
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import { SERVER_NODE_FLAGS } from '@/lib/server-flags';
import { freePort } from '@/bridge/testing/server';

// The browser tests take their ports from here too.
export { freePort };

const root = process.cwd();
const tsx = path.join(root, 'node_modules', '.bin', 'tsx');

async function waitFor<T>(what: string, probe: () => Promise<T | undefined>, timeoutMs: number): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  let lastError: unknown;
  while (Date.now() < deadline) {
    try {
      const value = await probe();
      if (value !== undefined) return value;
    } catch (error) {
      lastError = error;
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`timed out waiting for ${what}${lastError ? `: ${String(lastError)}` : ''}`);
}

export interface RunningApp {
  baseUrl: string;
  port: number;
  dataDir: string;
  bridgeToken: string;
  logs: () => string;
  /** The server process itself. */
  server: ChildProcess;
  /** Starts another process (simulator, bridge) that is stopped with the app. */
  spawnSide(args: string[], env?: Record<string, string>): ChildProcess;
  stop(): Promise<void>;
}

export async function startApp(extraEnv: Record<string, string> = {}): Promise<RunningApp> {
  if (!fs.existsSync(path.join(root, '.next', 'BUILD_ID'))) {
    throw new Error('No production build: run `npx next build` first (npm test does).');
  }
  const port = await freePort();
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-e2e-'));
  let output = '';
  const children: ChildProcess[] = [];
  const env = { ...process.env, PORT: String(port), DATA_DIR: dataDir, NODE_ENV: 'production' as const, HOST: '127.0.0.1', NEXT_TELEMETRY_DISABLED: '1', ...extraEnv };
  const track = (child: ChildProcess, name: string) => {
    child.stdout?.on('data', (d) => (output += `[${name}] ${d}`));
    child.stderr?.on('data', (d) => (output += `[${name}] ${d}`));
    children.push(child);
    return child;
  };
  const server = track(spawn(tsx, [...SERVER_NODE_FLAGS, '--tsconfig', 'tsconfig.server.json', 'server.ts', '--seed-demo'], { cwd: root, env }), 'server');
  const baseUrl = `http://127.0.0.1:${port}`;
  await waitFor('the server to answer /api/health', async () => ((await fetch(`${baseUrl}/api/health`)).ok ? true : undefined), 120_000).catch(
    (error) => {
      throw new Error(`${error.message}\n--- server output ---\n${output}`);
    },
  );
  // A second instance on a shared PostgreSQL finds the clinic seeded already and writes no token.
  const tokenFile = path.join(dataDir, 'demo-bridge-token');
  const bridgeToken = fs.existsSync(tokenFile) ? fs.readFileSync(tokenFile, 'utf8').trim() : '';
  return {
    baseUrl,
    port,
    dataDir,
    bridgeToken,
    logs: () => output,
    server,
    spawnSide: (args, extra = {}) => track(spawn(tsx, args, { cwd: root, env: { ...env, ...extra } }), path.basename(args[1] ?? args[0])),
    async stop() {
      await Promise.all(
        children.map(
          (child) =>
            new Promise<void>((resolve) => {
              if (child.exitCode !== null || child.signalCode !== null) return resolve();
              child.once('exit', () => resolve());
              child.kill('SIGTERM');
              setTimeout(() => child.kill('SIGKILL'), 5000).unref();
            }),
        ),
      );
      fs.rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

export function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-dev-shm-usage'],
  });
}

/** Signs in through the real form in a fresh browser context. */
export async function signInAs(
  browser: Browser,
  baseUrl: string,
  email: string,
  password = 'demo-only-pass',
  options: { viewport?: { width: number; height: number } } = {},
): Promise<Page> {
  const context = await browser.newContext({ baseURL: baseUrl, ...(options.viewport ? { viewport: options.viewport } : {}) });
  const page = await context.newPage();
  await page.goto('/sign-in');
  await page.fill('#email', email);
  await page.fill('#password', password);
  await page.click('button[type=submit]');
  await page.waitForURL('**/intake', { timeout: 60_000 });
  await page.waitForSelector('[data-live-state=live]', { timeout: 60_000 });
  return page;
}

/**
 * One server and one browser for a test file, started before its tests and stopped after them.
 * `prepare` runs first and may return extra environment for the server (e.g. a mail sink's SMTP_URL).
 */
export function appForThisFile(options: { prepare?: () => Promise<Record<string, string>> } = {}): { readonly app: RunningApp; readonly browser: Browser } {
  let app: RunningApp | undefined;
  let browser: Browser | undefined;
  beforeAll(async () => {
    app = await startApp((await options.prepare?.()) ?? {});
    browser = await launchBrowser();
  }, 180_000);
  afterAll(async () => {
    await browser?.close();
    await app?.stop();
  });
  return {
    get app() {
      if (!app) throw new Error('the app is not running (beforeAll failed?)');
      return app;
    },
    get browser() {
      if (!browser) throw new Error('the browser is not running (beforeAll failed?)');
      return browser;
    },
  };
}

/** Marks a page; the returned check is true only if the page was never reloaded since. */
export async function markAgainstReload(page: Page): Promise<() => Promise<boolean>> {
  const token = Math.random().toString(36).slice(2);
  await page.evaluate((t) => ((window as unknown as { __benchwireMark: string }).__benchwireMark = t), token);
  return async () => (await page.evaluate(() => (window as unknown as { __benchwireMark?: string }).__benchwireMark)) === token;
}

/** How far the page is wider than the window (0 when nothing scrolls sideways), and the elements that stick out. */
export async function sidewaysOverflow(page: Page): Promise<{ overflow: number; culprits: string[] }> {
  return page.evaluate(() => {
    const width = document.documentElement.clientWidth;
    const culprits = [...document.querySelectorAll<HTMLElement>('body *')]
      .filter((el) => el.getBoundingClientRect().right > width + 1 && el.getClientRects().length > 0)
      .slice(0, 5)
      .map((el) => `${el.tagName.toLowerCase()}${el.id ? `#${el.id}` : ''}.${String(el.className).slice(0, 60)}`);
    return { overflow: document.documentElement.scrollWidth - width, culprits };
  });
}

/**
 * Posts one anonymous CRP reading the way the bridge uploads a parsed slip with no sample ID on it;
 * returns the stored reading's id.
 */
export async function postAnonymousCrpReading(app: RunningApp, value: number, at: Date, keyPrefix: string): Promise<string> {
  const raw = `---- RESULT ----\nTEST      cCRP\nRESULT    ${value.toFixed(1)} mg/L\nSN        SIM-0001\n---- END ----\n`;
  const response = await fetch(`${app.baseUrl}/api/bridge/readings`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', authorization: `Bearer ${app.bridgeToken}` },
    body: JSON.stringify({
      records: [
        {
          key: `${keyPrefix}-${at.getTime()}-${value}`,
          instrument: 'crp-reader',
          receivedAt: at.toISOString(),
          payload: { kind: 'reading', analyte: 'cCRP', value, comparator: null, unit: 'mg/L', sampleId: null, patientRef: null, measuredAt: at.toISOString(), instrumentSerial: 'SIM-0001', raw },
        },
      ],
    }),
  });
  if (response.status !== 200) throw new Error(`the bridge upload answered ${response.status}: ${await response.text()}`);
  const { results } = (await response.json()) as { results: { id: string }[] };
  return results[0].id;
}

/** Posts one reading as the bridge uploads it (cCRP in mg/L from the demo reader unless the payload says otherwise); returns its id. */
export async function postCrpReading(app: RunningApp, payload: Record<string, unknown>, key: string): Promise<string> {
  const response = await fetch(`${app.baseUrl}/api/bridge/readings`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', authorization: `Bearer ${app.bridgeToken}` },
    body: JSON.stringify({
      records: [{ key, instrument: 'crp-reader', receivedAt: new Date().toISOString(), payload: { kind: 'reading', analyte: 'cCRP', unit: 'mg/L', raw: `RESULT ${payload.value} mg/L\n`, ...payload } }],
    }),
  });
  if (response.status !== 200) throw new Error(`the bridge upload answered ${response.status}: ${await response.text()}`);
  return ((await response.json()) as { results: { id: string }[] }).results[0].id;
}
