// One HTTP server for the whole app: Next's pages and route handlers, plus the live feed
// (WebSocket upgrades on /api/live). Migrations run before the first request is served.
import { createServer } from 'node:http';
import fs from 'node:fs';
import path from 'node:path';

const dev = process.argv.includes('--dev');
const seedDemo = process.argv.includes('--seed-demo');
const port = Number(process.env.PORT ?? 3000);
const hostname = process.env.HOST ?? '0.0.0.0';

// A log reader that went away (a closed terminal, a stopped pipe) must not spin the server: a write to a
// broken stdout or stderr is an EPIPE error, which logged to stderr again made one more, at full CPU, and
// the server no longer answered SIGTERM. Such writes are dropped.
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code !== 'EPIPE') throw error;
  });
}

async function main() {
  // Next reads NODE_ENV when it starts; a plain `npm run serve` means production.
  if (!dev) (process.env as Record<string, string>).NODE_ENV ??= 'production';
  // The TypeScript runner turns source maps on, and Node then keeps every loaded chunk's map in memory
  // (about 80 MB of the production server's heap). Production stack traces point into the built chunks.
  if (!dev) process.setSourceMapsEnabled(false);
  const { default: next } = await import('next');
  const { getDatabase } = await import('@/db/client');
  const { isEmpty, seedDemoClinic } = await import('@/db/seed');
  const { dataDir } = await import('@/lib/config');
  process.umask(0o077);
  // A short SESSION_SECRET would let the server start and then fail every sign-in: refuse to start instead.
  const { sessionSecret } = await import('@/lib/auth/session');
  try {
    // Instances sharing one PostgreSQL must seal sessions alike; a secret generated per DATA_DIR would not.
    if (process.env.DATABASE_URL && !process.env.SESSION_SECRET) {
      throw new Error('DATABASE_URL is set (server mode): set SESSION_SECRET too, the same on every app instance');
    }
    sessionSecret();
  } catch (error) {
    console.error(`[benchwire] cannot start: ${error instanceof Error ? error.message : String(error)}`);
    process.exit(1);
  }
  const database = await getDatabase();
  if (seedDemo && (await isEmpty(database.db))) {
    const { bridgeToken } = await seedDemoClinic(database.db);
    // Left for `npm start` to hand to the local demo bridge (demo only).
    fs.writeFileSync(path.join(dataDir(), 'demo-bridge-token'), bridgeToken, { mode: 0o600 });
    console.log('[benchwire] seeded the demo clinic (demo data only)');
  }

  const app = next({ dev, dir: process.cwd(), hostname, port });
  await app.prepare();
  const handle = app.getRequestHandler();
  const nextUpgrade = app.getUpgradeHandler();
  // The hub reaches next/server, which needs the environment Next sets up in prepare(): load it after.
  const { createLiveHub, LIVE_PATH } = await import('@/lib/live/hub');
  const hub = await createLiveHub();
  const { startBackgroundWork } = await import('@/lib/background');
  const stopBackground = startBackgroundWork();

  const server = createServer((req, res) => {
    // The client's address for sign-in throttling, always from the socket (a client cannot supply it);
    // behind a reverse proxy that sets X-Forwarded-For, BENCHWIRE_TRUST_PROXY=1 takes its first entry.
    const forwarded = process.env.BENCHWIRE_TRUST_PROXY === '1' ? String(req.headers['x-forwarded-for'] ?? '').split(',')[0].trim() : '';
    req.headers['x-benchwire-client-address'] = forwarded || req.socket.remoteAddress || 'unknown';
    handle(req, res).catch((error) => {
      console.error('[benchwire] request failed', error);
      if (!res.headersSent) res.writeHead(500, { 'content-type': 'application/json' });
      res.end(JSON.stringify({ error: { code: 'internal', message: 'Something went wrong on the server.', issues: [] } }));
    });
  });
  server.on('upgrade', (req, socket, head) => {
    const pathname = new URL(req.url ?? '/', 'http://localhost').pathname;
    if (pathname === LIVE_PATH) void hub.handleUpgrade(req, socket, head);
    else void nextUpgrade(req, socket, head);
  });

  server.listen(port, hostname, () => {
    console.log(`[benchwire] ready on http://localhost:${port} (${dev ? 'development' : 'production'}, data in ${dataDir()})`);
  });

  let closing = false;
  const shutdown = async (signal: string) => {
    if (closing) return;
    closing = true;
    console.log(`[benchwire] ${signal}: shutting down`);
    server.close();
    stopBackground();
    await hub.close().catch(() => {});
    await app.close().catch(() => {});
    await database.close().catch(() => {});
    process.exit(0);
  };
  process.on('SIGINT', () => void shutdown('SIGINT'));
  process.on('SIGTERM', () => void shutdown('SIGTERM'));
}

main().catch((error) => {
  console.error('[benchwire] failed to start', error);
  process.exit(1);
});
