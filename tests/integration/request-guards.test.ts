// Requests a browser on another site could make, bodies too big to read, and the live feed's own guards.
// Sources: Fetch standard (Origin and Sec-Fetch-Site headers; a "simple" request with text/plain or a form
// type needs no CORS preflight, so a page can send it cross-site with credentials); RFC 6454 §7 (Origin);
// RFC 6455 §4.1 and §10.2 (browsers send Origin on the WebSocket handshake; servers should check it);
// RFC 9110 §15.5.14 (413) and §15.5.16 (415); RFC 9111 §5.2.2.5 (no-store).
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { body } from './support';
import { POST as newStaffRoute } from '@/app/api/admin/staff/route';
import { PATCH as updateStaffRoute } from '@/app/api/admin/staff/[userId]/route';
import { POST as revokeRoute } from '@/app/api/admin/bridges/[bridgeId]/revoke/route';
import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import { POST as signOutRoute } from '@/app/api/auth/sign-out/route';
import { POST as bridgeReadingsRoute } from '@/app/api/bridge/readings/route';
import { GET as patientsRoute } from '@/app/api/patients/route';
import type { Database } from '@/db/client';
import { bridges, staffUsers } from '@/db/schema';
import { BODY_LIMITS } from '@/lib/http';
import { createLiveHub } from '@/lib/live/hub';
import nextConfig from '@/next.config';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let adminCookie: string;
let bridgeToken: string;
beforeAll(async () => {
  ({ database, bridgeToken } = await seededDatabase());
  adminCookie = await signIn('admin@fernhollow.example');
});

const OWN = 'http://benchwire.test';
const newStaff = (email: string) => ({ displayName: 'Rowan Test', email, role: 'admin', password: 'a-long-enough-pass' });
const staffCount = async (email: string) => (await database.db.select().from(staffUsers).where(eq(staffUsers.email, email))).length;

describe('state-changing requests from other origins (CSRF)', () => {
  it('a page on another port of the same host cannot create an admin (Origin differs) — 403, nothing stored', async () => {
    const response = await newStaffRoute(
      request('/api/admin/staff', { cookie: adminCookie, body: newStaff('csrf1@fernhollow.example'), headers: { origin: 'http://benchwire.test:4444' } }),
      undefined,
    );
    expect(response.status).toBe(403);
    expect((await body(response)).error.code).toBe('cross_site_request');
    expect(await staffCount('csrf1@fernhollow.example')).toBe(0);
  });

  it('text/plain;application/json (a no-cors simple request) is refused with 415, even from our own origin', async () => {
    const response = await newStaffRoute(
      request('/api/admin/staff', {
        cookie: adminCookie,
        body: JSON.stringify(newStaff('csrf2@fernhollow.example')),
        headers: { 'content-type': 'text/plain;application/json', origin: OWN },
      }),
      undefined,
    );
    expect(response.status).toBe(415);
    expect(await staffCount('csrf2@fernhollow.example')).toBe(0);
  });

  it('Sec-Fetch-Site: same-site without Origin is refused; an opaque origin ("null") is refused', async () => {
    for (const headers of [{ 'sec-fetch-site': 'same-site' }, { 'sec-fetch-site': 'cross-site' }, { origin: 'null' }] as Record<string, string>[]) {
      const response = await newStaffRoute(request('/api/admin/staff', { cookie: adminCookie, body: newStaff('csrf3@fernhollow.example'), headers }), undefined);
      expect(response.status).toBe(403);
    }
    expect(await staffCount('csrf3@fernhollow.example')).toBe(0);
  });

  it('a bodyless POST sent as a plain form (revoke a bridge token) is refused, from another origin and as a form type', async () => {
    const [bridge] = await database.db.select().from(bridges);
    const asForm = { 'content-type': 'application/x-www-form-urlencoded' };
    const crossSite = await revokeRoute(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie, headers: { ...asForm, origin: 'http://evil.test' } }), params({ bridgeId: bridge.id }));
    expect(crossSite.status).toBe(403);
    const formType = await revokeRoute(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie, headers: { ...asForm, origin: OWN } }), params({ bridgeId: bridge.id }));
    expect(formType.status).toBe(415);
    const [still] = await database.db.select().from(bridges).where(eq(bridges.id, bridge.id));
    expect(still.revokedAt).toBeNull();
  });

  it('the same request from our own origin (Origin and Sec-Fetch-Site: same-origin) is allowed', async () => {
    const response = await newStaffRoute(
      request('/api/admin/staff', {
        cookie: adminCookie,
        body: newStaff('same-origin@fernhollow.example'),
        headers: { origin: OWN, 'sec-fetch-site': 'same-origin', 'content-type': 'application/json; charset=utf-8' },
      }),
      undefined,
    );
    expect(response.status).toBe(201);
    expect(await staffCount('same-origin@fernhollow.example')).toBe(1);
  });

  it('an origin listed in BENCHWIRE_TRUSTED_ORIGINS (the public address behind a proxy) is allowed', async () => {
    process.env.BENCHWIRE_TRUSTED_ORIGINS = 'https://lab.clinic.example';
    try {
      const response = await newStaffRoute(
        request('/api/admin/staff', { cookie: adminCookie, body: newStaff('trusted@fernhollow.example'), headers: { origin: 'https://lab.clinic.example' } }),
        undefined,
      );
      expect(response.status).toBe(201);
    } finally {
      delete process.env.BENCHWIRE_TRUSTED_ORIGINS;
    }
  });
});

/** A body produced only as it is read; counts how much the server pulled. */
function streamingBody(totalBytes: number, chunkBytes = 64 * 1024) {
  let pulled = 0;
  const chunk = new Uint8Array(chunkBytes).fill(0x20);
  const stream = new ReadableStream<Uint8Array>({
    pull(controller) {
      if (pulled >= totalBytes) return controller.close();
      pulled += chunk.byteLength;
      controller.enqueue(chunk);
    },
  });
  return { stream, pulled: () => pulled };
}

function streamingRequest(path: string, stream: ReadableStream<Uint8Array>, headers: Record<string, string> = {}) {
  return new Request(OWN + path, { method: 'POST', headers: { 'content-type': 'application/json', ...headers }, body: stream, duplex: 'half' } as RequestInit);
}

describe('bodies are limited while they stream in', () => {
  it('a 100 MB sign-in body (chunked, no Content-Length) is refused with 413 after reading no more than the limit', async () => {
    const big = streamingBody(100 * 1024 * 1024);
    const response = await signInRoute(streamingRequest('/api/auth/sign-in', big.stream), undefined);
    expect(response.status).toBe(413);
    // The server stopped pulling once past the small sign-in limit: it never held the 100 MB.
    expect(big.pulled()).toBeLessThanOrEqual(BODY_LIMITS.small + 2 * 64 * 1024);
  });

  it('a declared Content-Length over the limit is refused before any of the body is read', async () => {
    const big = streamingBody(100 * 1024 * 1024);
    const response = await signInRoute(streamingRequest('/api/auth/sign-in', big.stream, { 'content-length': String(100 * 1024 * 1024) }), undefined);
    expect(response.status).toBe(413);
    expect(big.pulled()).toBeLessThanOrEqual(64 * 1024);
  });

  it('a bridge may send a batch up to its limit, and 413 past it', async () => {
    const big = streamingBody(BODY_LIMITS.bridge + 1024 * 1024);
    const response = await bridgeReadingsRoute(streamingRequest('/api/bridge/readings', big.stream, { authorization: `Bearer ${bridgeToken}` }), undefined);
    expect(response.status).toBe(413);
    expect(big.pulled()).toBeLessThanOrEqual(BODY_LIMITS.bridge + 2 * 64 * 1024);
  });
});

describe('response headers', () => {
  it('API answers with patient data carry Cache-Control: no-store', async () => {
    const response = await patientsRoute(request('/api/patients', { cookie: adminCookie }), undefined);
    expect(response.status).toBe(200);
    expect(response.headers.get('cache-control')).toBe('no-store');
  });

  it("API answers say how long their handler took (W3C Server Timing: metric name, then ';dur=' in milliseconds)", async () => {
    const ok = await patientsRoute(request('/api/patients', { cookie: adminCookie }), undefined);
    const refused = await patientsRoute(request('/api/patients'), undefined);
    expect(refused.status).toBe(401);
    for (const response of [ok, refused]) expect(response.headers.get('server-timing')).toMatch(/^handler;dur=\d+\.\d$/);
  });

  it('next.config sends CSP with frame-ancestors none, nosniff, Referrer-Policy, Permissions-Policy, and HSTS only behind HTTPS', async () => {
    const rules = await nextConfig.headers!();
    const everywhere = rules.find((r) => r.source === '/:path*' && !r.has)!;
    const named = Object.fromEntries(everywhere.headers.map((h) => [h.key.toLowerCase(), h.value]));
    expect(named['content-security-policy']).toContain("frame-ancestors 'none'");
    expect(named['content-security-policy']).toContain("object-src 'none'");
    expect(named['x-content-type-options']).toBe('nosniff');
    expect(named['referrer-policy']).toBe('same-origin');
    expect(named['permissions-policy']).toContain('camera=()');
    expect(named['strict-transport-security']).toBeUndefined();
    const hsts = rules.find((r) => r.headers.some((h) => h.key === 'Strict-Transport-Security'))!;
    expect(hsts.has).toEqual([{ type: 'header', key: 'x-forwarded-proto', value: 'https' }]);
    const api = rules.find((r) => r.source === '/api/:path*')!;
    expect(api.headers).toContainEqual({ key: 'Cache-Control', value: 'no-store' });
  });
});

describe('the live feed', () => {
  let server: Server;
  let hub: Awaited<ReturnType<typeof createLiveHub>>;
  let url: string;
  let host: string;
  const sockets: WebSocket[] = [];

  beforeAll(async () => {
    hub = await createLiveHub();
    server = createServer((_req, res) => res.writeHead(404).end());
    server.on('upgrade', (req, socket, head) => void hub.handleUpgrade(req, socket, head));
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    host = `127.0.0.1:${(server.address() as AddressInfo).port}`;
    url = `ws://${host}/api/live`;
  });

  afterAll(async () => {
    for (const s of sockets) s.terminate();
    await hub?.close();
    await new Promise<void>((resolve) => server.close(() => resolve()));
  });

  /** Resolves 'open' after the hello, or the HTTP status the handshake was refused with. */
  function connect(cookie: string, origin?: string) {
    const socket = new WebSocket(url, { headers: { cookie }, ...(origin ? { origin } : {}) });
    sockets.push(socket);
    socket.on('error', () => {}); // a refused handshake is the expected outcome in some tests
    return new Promise<{ socket: WebSocket; result: 'open' | number }>((resolve) => {
      socket.once('message', () => resolve({ socket, result: 'open' }));
      socket.once('unexpected-response', (_req, res) => resolve({ socket, result: res.statusCode ?? 0 }));
    });
  }
  const closed = (socket: WebSocket) =>
    new Promise<number>((resolve) => (socket.readyState === WebSocket.CLOSED ? resolve(-1) : socket.once('close', (code) => resolve(code))));

  it('a handshake from another origin is refused (403); our own origin is accepted', async () => {
    expect((await connect(adminCookie, 'http://evil.test')).result).toBe(403);
    expect((await connect(adminCookie, `http://${host}`)).result).toBe('open');
  });

  it('a 10 kB client frame closes that socket (1009) without an uncaught error', async () => {
    const { socket, result } = await connect(adminCookie);
    expect(result).toBe('open');
    socket.send('x'.repeat(10 * 1024));
    // RFC 6455 §7.4.1: 1009, message too big.
    expect(await closed(socket)).toBe(1009);
  });

  it('signing out closes that session’s socket; other sessions stay', async () => {
    const cookie = await signIn('vet@fernhollow.example');
    const other = await connect(await signIn('vet@fernhollow.example'));
    const { socket } = await connect(cookie);
    const closing = closed(socket);
    expect((await signOutRoute(request('/api/auth/sign-out', { method: 'POST', cookie }), undefined)).status).toBe(200);
    expect(await closing).toBe(4401);
    expect(other.socket.readyState).toBe(WebSocket.OPEN);
  });

  it('deactivating a person closes all their sockets', async () => {
    const [tech] = await database.db.select().from(staffUsers).where(eq(staffUsers.email, 'tech@fernhollow.example'));
    const first = await connect(await signIn('tech@fernhollow.example'));
    const second = await connect(await signIn('tech@fernhollow.example'));
    const closing = Promise.all([closed(first.socket), closed(second.socket)]);
    const response = await updateStaffRoute(request('/api/admin/staff/x', { method: 'PATCH', cookie: adminCookie, body: { active: false } }), params({ userId: tech.id }));
    expect(response.status).toBe(200);
    expect(await closing).toEqual([4401, 4401]);
  });
});
