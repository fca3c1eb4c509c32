// Regression (was a spec deviation): lib/auth/guards.ts requireBridge throws ApiError(401) and lib/http.ts errorResponse sends no
// WWW-Authenticate header. RFC 9110 §15.5.2: "The server generating a 401 response MUST send a WWW-Authenticate
// header field containing at least one challenge"; RFC 6750 §3: a Bearer resource server MUST include
// WWW-Authenticate when the request lacks a usable token, with error="invalid_token" for a bad one (§3.1).
// (Staff routes use a cookie, for which no challenge scheme exists; they are left out here.)
import { beforeAll, describe, expect, it } from 'vitest';
import { readingRecord } from './support';
import { GET as config } from '@/app/api/bridge/config/route';
import { POST as heartbeat } from '@/app/api/bridge/heartbeat/route';
import { POST as ingest } from '@/app/api/bridge/readings/route';
import { seededDatabase } from '../helpers/db';
import { request } from '../helpers/http';

beforeAll(async () => {
  await seededDatabase();
});

describe('bridge routes answer 401 with a Bearer challenge', () => {
  it('without a token: WWW-Authenticate: Bearer …', async () => {
    const response = await ingest(request('/api/bridge/readings', { body: { records: [readingRecord('www-00000001')] } }), undefined);
    expect(response.status).toBe(401);
    expect(response.headers.get('www-authenticate')).toMatch(/^Bearer\b/i);
    const beat = await heartbeat(request('/api/bridge/heartbeat', { body: { spoolDepth: 0 } }), undefined);
    expect(beat.headers.get('www-authenticate')).toMatch(/^Bearer\b/i);
  });

  it('with an unknown token: error="invalid_token" (RFC 6750 §3.1)', async () => {
    const response = await config(request('/api/bridge/config', { token: 'bwb_unknown' }), undefined);
    expect(response.status).toBe(401);
    expect(response.headers.get('www-authenticate')).toMatch(/^Bearer\b.*error="invalid_token"/i);
  });
});
