import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne } from './support';
import * as acknowledge from '@/app/api/alerts/[alertId]/acknowledge/route';
import * as alerts from '@/app/api/alerts/route';
import * as adminClinical from '@/app/api/admin/clinical/route';
import * as analytes from '@/app/api/admin/clinical/analytes/[code]/route';
import * as defaults from '@/app/api/admin/clinical/defaults/route';
import * as intervals from '@/app/api/admin/clinical/intervals/route';
import * as protocols from '@/app/api/admin/clinical/protocols/[protocolId]/route';
import * as orders from '@/app/api/orders/route';
import * as options from '@/app/api/orders/options/route';
import * as abort from '@/app/api/orders/[orderId]/abort/route';
import * as cancel from '@/app/api/orders/[orderId]/cancel/route';
import * as reassign from '@/app/api/readings/[readingId]/reassign/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import * as suggestions from '@/app/api/readings/[readingId]/suggestions/route';
import * as allSuggestions from '@/app/api/readings/suggestions/route';
import * as unreviewed from '@/app/api/reviews/unreviewed/route';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Role rules on every new route, from the brief: technicians and veterinarians start tests and assign;
// only veterinarians review, sign off and acknowledge; only administrators configure. 401 without a
// session and 403 for the wrong role (RFC 9110 §15.5.2, §15.5.4), always as JSON.

type Handler = (request: Request, context: any) => Promise<Response>; // eslint-disable-line @typescript-eslint/no-explicit-any
interface Call {
  name: string;
  handler: Handler;
  method: string;
  context: () => unknown;
  body?: unknown;
  /** Roles the brief allows; the others must get 403. */
  allowed: ('admin' | 'veterinarian' | 'technician')[];
}

let cookies: Record<'admin' | 'veterinarian' | 'technician', string>;
let readingId: string;
const u = '00000000-0000-4000-8000-000000000000';

beforeAll(async () => {
  const { bridgeToken } = await seededDatabase();
  cookies = {
    admin: await signIn('admin@fernhollow.example'),
    veterinarian: await signIn('vet@fernhollow.example'),
    technician: await signIn('tech@fernhollow.example'),
  };
  readingId = await ingestOne(bridgeToken, 'authz-clinical-0001');
});

const all = ['admin', 'veterinarian', 'technician'] as const;
const CALLS: Call[] = [
  { name: 'GET /api/orders', handler: orders.GET, method: 'GET', context: () => undefined, allowed: [...all] },
  { name: 'GET /api/orders/options', handler: options.GET, method: 'GET', context: () => undefined, allowed: [...all] },
  // Bodies are invalid on purpose where allowed roles would change data: the guard answers before validation.
  { name: 'POST /api/orders', handler: orders.POST, method: 'POST', context: () => undefined, body: { patientId: u, analyte: 'cCRP', sampleType: 'serum', orderedBy: u }, allowed: ['veterinarian', 'technician'] },
  { name: 'POST /api/orders/[id]/abort', handler: abort.POST, method: 'POST', context: () => params({ orderId: u }), body: { reason: 'x-test' }, allowed: ['veterinarian', 'technician'] },
  { name: 'POST /api/orders/[id]/cancel', handler: cancel.POST, method: 'POST', context: () => params({ orderId: u }), body: { reason: 'x-test' }, allowed: ['veterinarian', 'technician'] },
  { name: 'GET /api/readings/suggestions', handler: allSuggestions.GET, method: 'GET', context: () => undefined, allowed: [...all] },
  { name: 'GET /api/readings/[id]/suggestions', handler: suggestions.GET, method: 'GET', context: () => params({ readingId }), allowed: [...all] },
  { name: 'POST /api/readings/[id]/reviews', handler: reviews.POST, method: 'POST', context: () => params({ readingId: u }), body: { reviewed: true }, allowed: ['veterinarian'] },
  { name: 'POST /api/readings/[id]/reassign', handler: reassign.POST, method: 'POST', context: () => params({ readingId: u }), body: { patientId: u, fromPatientId: u, reason: 'x-test' }, allowed: ['admin', 'veterinarian', 'technician'] },
  { name: 'GET /api/reviews/unreviewed', handler: unreviewed.GET, method: 'GET', context: () => undefined, allowed: [...all] },
  { name: 'GET /api/alerts', handler: alerts.GET, method: 'GET', context: () => undefined, allowed: [...all] },
  { name: 'POST /api/alerts/[id]/acknowledge', handler: acknowledge.POST, method: 'POST', context: () => params({ alertId: u }), body: {}, allowed: ['veterinarian'] },
  { name: 'GET /api/admin/clinical', handler: adminClinical.GET, method: 'GET', context: () => undefined, allowed: ['admin'] },
  { name: 'PATCH /api/admin/clinical', handler: adminClinical.PATCH, method: 'PATCH', context: () => undefined, body: {}, allowed: ['admin'] },
  { name: 'POST /api/admin/clinical/intervals', handler: intervals.POST, method: 'POST', context: () => undefined, body: {}, allowed: ['admin'] },
  { name: 'PATCH /api/admin/clinical/analytes/[code]', handler: analytes.PATCH, method: 'PATCH', context: () => params({ code: 'cCRP' }), body: {}, allowed: ['admin'] },
  { name: 'PATCH /api/admin/clinical/protocols/[id]', handler: protocols.PATCH, method: 'PATCH', context: () => params({ protocolId: u }), body: {}, allowed: ['admin'] },
  { name: 'POST /api/admin/clinical/defaults', handler: defaults.POST, method: 'POST', context: () => undefined, allowed: ['admin'] },
];

const call = (c: Call, cookie?: string) => c.handler(request('/api/x', { method: c.method, body: c.method === 'GET' ? undefined : (c.body ?? {}), cookie }), c.context());

describe('new routes: sessions and roles', () => {
  for (const c of CALLS) {
    it(`${c.name}: 401 anonymous; 403 for roles the brief does not allow; never 5xx`, async () => {
      const anonymous = await call(c);
      expect(anonymous.status).toBe(401);
      expect((await body(anonymous)).error.code).toBe('unauthenticated');
      for (const role of all) {
        const response = await call(c, cookies[role]);
        expect(response.status, role).toBeLessThan(500);
        if (c.allowed.includes(role)) expect(response.status, role).not.toBe(403);
        else {
          expect(response.status, role).toBe(403);
          expect((await body(response)).error.code).toBe('forbidden');
        }
      }
    });
  }
});
