import { randomUUID } from 'node:crypto';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, readingRecord, staffByEmail } from './support';
import * as adminBridges from '@/app/api/admin/bridges/route';
import * as adminRevoke from '@/app/api/admin/bridges/[bridgeId]/revoke/route';
import * as adminInstruments from '@/app/api/admin/instruments/route';
import * as adminStaff from '@/app/api/admin/staff/route';
import * as adminStaffMember from '@/app/api/admin/staff/[userId]/route';
import * as adminStaffPassword from '@/app/api/admin/staff/[userId]/password/route';
import * as adminAudit from '@/app/api/admin/audit/route';
import * as me from '@/app/api/auth/me/route';
import * as signOut from '@/app/api/auth/sign-out/route';
import * as heartbeat from '@/app/api/bridge/heartbeat/route';
import * as bridgeReadings from '@/app/api/bridge/readings/route';
import * as bridgeConfig from '@/app/api/bridge/config/route';
import * as captureDismiss from '@/app/api/captures/[captureId]/dismiss/route';
import * as captureTranscribe from '@/app/api/captures/[captureId]/transcribe/route';
import * as captures from '@/app/api/captures/route';
import * as patientsList from '@/app/api/patients/route';
import * as patient from '@/app/api/patients/[patientId]/route';
import * as patientResults from '@/app/api/patients/[patientId]/results/route';
import * as readingsList from '@/app/api/readings/route';
import * as reading from '@/app/api/readings/[readingId]/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as voidRoute from '@/app/api/readings/[readingId]/void/route';
import * as setup from '@/app/api/setup/route';
import type { Database } from '@/db/client';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Every route's own context type differs; the matrix only needs to call them alike.
// eslint-disable-next-line @typescript-eslint/no-explicit-any
type Handler = (request: Request, context: any) => Promise<Response>;
interface Call {
  name: string;
  handler: Handler;
  method: string;
  path: string;
  context: () => unknown;
  body?: () => unknown;
}

let database: Database;
let bridgeToken: string;
let ids: { reading: string; patient: string; staff: string; bridge: string };
const cookies: Record<'admin' | 'veterinarian' | 'technician', string> = { admin: '', veterinarian: '', technician: '' };

beforeAll(async () => {
  ({ database, bridgeToken } = await seededDatabase());
  const readingId = await ingestOne(bridgeToken, 'authz-00000001');
  const [p] = await database.db.query.patients.findMany({ limit: 1 });
  const [b] = await database.db.query.bridges.findMany({ limit: 1 });
  const vet2 = await staffByEmail(database.db, 'vet2@fernhollow.example');
  ids = { reading: readingId, patient: p.id, staff: vet2.id, bridge: b.id };
  cookies.admin = await signIn('admin@fernhollow.example');
  cookies.veterinarian = await signIn('vet@fernhollow.example');
  cookies.technician = await signIn('tech@fernhollow.example');
});

const none = () => undefined;

/** Staff routes: a session cookie is required. Bodies are valid so only the guard can refuse. */
const STAFF_ROUTES: Call[] = [
  { name: 'GET /api/auth/me', handler: me.GET, method: 'GET', path: '/api/auth/me', context: none },
  { name: 'GET /api/readings', handler: readingsList.GET, method: 'GET', path: '/api/readings', context: none },
  { name: 'GET /api/readings/[id]', handler: reading.GET, method: 'GET', path: '/api/readings/x', context: () => params({ readingId: ids.reading }) },
  {
    name: 'POST /api/readings/[id]/assign',
    handler: assign.POST,
    method: 'POST',
    path: '/api/readings/x/assign',
    context: () => params({ readingId: ids.reading }),
    body: () => ({ patientId: ids.patient }),
  },
  {
    name: 'POST /api/readings/[id]/void',
    handler: voidRoute.POST,
    method: 'POST',
    path: '/api/readings/x/void',
    context: () => params({ readingId: ids.reading }),
    body: () => ({ reason: 'control run' }),
  },
  { name: 'GET /api/captures', handler: captures.GET, method: 'GET', path: '/api/captures', context: none },
  // Capture actions: only the guard is exercised here (their bodies never get read without a session).
  {
    name: 'POST /api/captures/[id]/dismiss',
    handler: captureDismiss.POST,
    method: 'POST',
    path: '/api/captures/x/dismiss',
    context: () => params({ captureId: crypto.randomUUID() }),
    body: () => ({}),
  },
  {
    name: 'POST /api/captures/[id]/transcribe',
    handler: captureTranscribe.POST,
    method: 'POST',
    path: '/api/captures/x/transcribe',
    context: () => params({ captureId: crypto.randomUUID() }),
    body: () => ({}),
  },
  { name: 'GET /api/patients', handler: patientsList.GET, method: 'GET', path: '/api/patients?q=bis', context: none },
  { name: 'GET /api/patients/[id]', handler: patient.GET, method: 'GET', path: '/api/patients/x', context: () => params({ patientId: ids.patient }) },
  {
    name: 'GET /api/patients/[id]/results',
    handler: patientResults.GET,
    method: 'GET',
    path: '/api/patients/x/results',
    context: () => params({ patientId: ids.patient }),
  },
];

const ADMIN_ROUTES: Call[] = [
  { name: 'GET /api/admin/staff', handler: adminStaff.GET, method: 'GET', path: '/api/admin/staff', context: none },
  {
    name: 'POST /api/admin/staff',
    handler: adminStaff.POST,
    method: 'POST',
    path: '/api/admin/staff',
    context: none,
    body: () => ({ displayName: 'Sable Ingram', email: `sable-${randomUUID()}@fernhollow.example`, role: 'admin', password: 'long-enough-pass' }),
  },
  {
    name: 'PATCH /api/admin/staff/[id]',
    handler: adminStaffMember.PATCH,
    method: 'PATCH',
    path: '/api/admin/staff/x',
    context: () => params({ userId: ids.staff }),
    body: () => ({ role: 'admin' }),
  },
  {
    name: 'POST /api/admin/staff/[id]/password',
    handler: adminStaffPassword.POST,
    method: 'POST',
    path: '/api/admin/staff/x/password',
    context: () => params({ userId: ids.staff }),
    body: () => ({ password: 'a-temporary-pass-1' }),
  },
  { name: 'GET /api/admin/audit', handler: adminAudit.GET, method: 'GET', path: '/api/admin/audit', context: none },
  { name: 'GET /api/admin/bridges', handler: adminBridges.GET, method: 'GET', path: '/api/admin/bridges', context: none },
  {
    name: 'POST /api/admin/bridges',
    handler: adminBridges.POST,
    method: 'POST',
    path: '/api/admin/bridges',
    context: none,
    body: () => ({ name: 'Sneaky bridge' }),
  },
  {
    name: 'POST /api/admin/bridges/[id]/revoke',
    handler: adminRevoke.POST,
    method: 'POST',
    path: '/api/admin/bridges/x/revoke',
    context: () => params({ bridgeId: ids.bridge }),
  },
  { name: 'GET /api/admin/instruments', handler: adminInstruments.GET, method: 'GET', path: '/api/admin/instruments', context: none },
  {
    name: 'POST /api/admin/instruments',
    handler: adminInstruments.POST,
    method: 'POST',
    path: '/api/admin/instruments',
    context: none,
    body: () => ({ code: `sneaky-${Date.now()}`, name: 'Sneaky', analytes: ['GLU'], dialect: 'astm-e1394' }),
  },
];

const BRIDGE_ROUTES: Call[] = [
  { name: 'GET /api/bridge/config', handler: bridgeConfig.GET, method: 'GET', path: '/api/bridge/config', context: none },
  {
    name: 'POST /api/bridge/readings',
    handler: bridgeReadings.POST,
    method: 'POST',
    path: '/api/bridge/readings',
    context: none,
    body: () => ({ records: [readingRecord(`authz-${randomUUID()}`)] }),
  },
  {
    name: 'POST /api/bridge/heartbeat',
    handler: heartbeat.POST,
    method: 'POST',
    path: '/api/bridge/heartbeat',
    context: none,
    body: () => ({ spoolDepth: 0 }),
  },
];

const call = (c: Call, auth: { cookie?: string; token?: string } = {}) =>
  c.handler(request(c.path, { method: c.method, body: c.body?.(), ...auth }), c.context());

async function expectError(response: Response, status: number, code?: string) {
  expect(response.status).toBe(status);
  expect(response.headers.get('content-type')).toMatch(/^application\/json/);
  const json = await body(response);
  expect(typeof json.error.message).toBe('string');
  if (code) expect(json.error.code).toBe(code);
}

describe('anonymous callers', () => {
  // RFC 9110 §15.5.2: 401 when the request lacks valid credentials. Answered as JSON like every API error.
  for (const c of [...STAFF_ROUTES, ...ADMIN_ROUTES, ...BRIDGE_ROUTES]) {
    it(`get 401 JSON from ${c.name}`, async () => {
      await expectError(await call(c), 401, 'unauthenticated');
    });
  }

  it('are let through where no account can exist yet or nothing is at stake', async () => {
    // Setup answers 409 once a clinic exists (it is the first-run route); sign-out only clears a cookie.
    const again = await setup.POST(
      request('/api/setup', { body: { clinicName: 'Intruder Clinic', displayName: 'Ivo Brandt', email: 'ivo@intruder.example', password: 'long-enough-pass' } }),
      undefined,
    );
    await expectError(again, 409, 'already_set_up');
    expect((await signOut.POST(request('/api/auth/sign-out', { method: 'POST' }), undefined)).status).toBe(200);
  });
});

describe('clinical roles', () => {
  for (const role of ['technician', 'veterinarian'] as const) {
    for (const c of ADMIN_ROUTES) {
      it(`${role} gets 403 from ${c.name}`, async () => {
        // RFC 9110 §15.5.4: 403 when authenticated but not permitted.
        await expectError(await call(c, { cookie: cookies[role] }), 403, 'forbidden');
      });
    }

    it(`${role} may read results, captures and patients`, async () => {
      for (const c of STAFF_ROUTES.filter((r) => r.method === 'GET')) {
        const response = await call(c, { cookie: cookies[role] });
        expect(response.status, c.name).toBe(200);
      }
    });
  }

  it('and the refused calls changed nothing', async () => {
    const staff = await database.db.query.staffUsers.findMany();
    expect(staff).toHaveLength(4);
    expect(staff.find((u) => u.id === ids.staff)?.role).toBe('veterinarian');
    const bridgeRows = await database.db.query.bridges.findMany();
    expect(bridgeRows.map((b) => [b.name, b.revokedAt])).toEqual([['Lab PC (bench 1)', null]]);
    // The demo seed's three instruments, and no more.
    expect(await database.db.query.instruments.findMany()).toHaveLength(3);
  });
});

describe('administrators', () => {
  it('may list staff, bridges and instruments', async () => {
    for (const c of ADMIN_ROUTES.filter((r) => r.method === 'GET')) {
      const response = await call(c, { cookie: cookies.admin });
      expect(response.status, c.name).toBe(200);
    }
  });

  it('may add staff, bridges and instruments and change staff', async () => {
    for (const c of ADMIN_ROUTES.filter((r) => r.method !== 'GET' && !r.name.includes('revoke'))) {
      const response = await call(c, { cookie: cookies.admin });
      expect([200, 201], c.name).toContain(response.status);
    }
  });
});

describe('bridges and staff do not share credentials', () => {
  it('a bridge token as Bearer does not open staff routes', async () => {
    for (const c of [...STAFF_ROUTES, ...ADMIN_ROUTES]) {
      const response = await call(c, { token: bridgeToken });
      expect(response.status, c.name).toBe(401);
    }
  });

  it('a bridge token in the session cookie does not open staff routes', async () => {
    const response = await readingsList.GET(request('/api/readings', { cookie: `benchwire_session=${bridgeToken}` }), undefined);
    await expectError(response, 401, 'unauthenticated');
  });

  it('a staff session cookie does not open bridge routes, nor does the seal sent as Bearer', async () => {
    for (const c of BRIDGE_ROUTES) {
      await expectError(await call(c, { cookie: cookies.admin }), 401, 'unauthenticated');
      const seal = cookies.admin.slice(cookies.admin.indexOf('=') + 1);
      await expectError(await call(c, { token: decodeURIComponent(seal) }), 401, 'invalid_token');
    }
  });

  it('an unknown token is 401 invalid_token on bridge routes', async () => {
    for (const c of BRIDGE_ROUTES) await expectError(await call(c, { token: 'bwb_not-a-real-token' }), 401, 'invalid_token');
  });
});
