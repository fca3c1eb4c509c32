// Regression: cookieValue() calls decodeURIComponent() on the cookie value without a try/catch. A Cookie header such as
// "benchwire_session=%E0%A4%A" (any malformed percent-escape) throws URIError:
//  - every staff route answers 500 "internal" instead of 401 (apiRoute catches it as an unexpected error);
//  - lib/live/hub.ts handleUpgrade() evaluates cookieValue(...) *outside* the .catch(() => null), so the
//    returned promise rejects; server.ts calls it as `void hub.handleUpgrade(...)`, an unhandled rejection,
//    which ends the Node process (Node ≥ 15 default --unhandled-rejections=throw). Anyone who can reach
//    /api/live can take the server down with one request.
import { PassThrough } from 'node:stream';
import type { IncomingMessage } from 'node:http';
import { beforeAll, describe, expect, it } from 'vitest';
import './support';
import { GET as me } from '@/app/api/auth/me/route';
import { GET as readings } from '@/app/api/readings/route';
import { SESSION_COOKIE, cookieValue } from '@/lib/auth/session';
import { createLiveHub } from '@/lib/live/hub';
import { seededDatabase } from '../helpers/db';
import { request } from '../helpers/http';

const MALFORMED = 'benchwire_session=%E0%A4%A';

beforeAll(async () => {
  await seededDatabase();
});

describe('a malformed percent-escape in the session cookie', () => {
  it('cookieValue does not throw (RFC 6265 defines no percent-decoding; a bad value is just not a session)', () => {
    expect(() => cookieValue(MALFORMED, SESSION_COOKIE)).not.toThrow();
  });

  it('staff routes answer 401, not 500 (RFC 9110 §15.5.2)', async () => {
    for (const route of [me, readings]) {
      const response = await route(request('/api/x', { cookie: MALFORMED }), undefined);
      expect(response.status).toBe(401);
    }
  });

  it('the live hub refuses the upgrade with 401 instead of rejecting', async () => {
    const hub = await createLiveHub();
    try {
      const socket = new PassThrough();
      let written = '';
      socket.on('data', (chunk) => (written += String(chunk)));
      const req = { headers: { cookie: MALFORMED }, url: '/api/live', method: 'GET' } as unknown as IncomingMessage;
      await expect(hub.handleUpgrade(req, socket, Buffer.alloc(0))).resolves.toBeUndefined();
      expect(written).toMatch(/^HTTP\/1\.1 401/);
    } finally {
      await hub.close();
    }
  });
});
