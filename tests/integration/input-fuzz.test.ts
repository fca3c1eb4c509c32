// Hostile text and dates on every route: a 4xx naming the field, never a 5xx.
// Sources: PostgreSQL docs, "Character Types" (text cannot hold the character with code zero); Unicode
// Standard §3.9 D91/D92 (lone surrogates are not scalar values, so have no UTF-8 form); ISO 8601 /
// RFC 3339 §5.6 (date-time grammar; month lengths) — year 0000 is outside PostgreSQL's timestamptz
// (it counts 1 BC, no year 0; PostgreSQL docs "Date/Time Types" — from memory, verify).
import fs from 'node:fs';
import path from 'node:path';
import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, readingRecord, unparsedRecord } from './support';
import type { Database } from '@/db/client';
import { patients, staffUsers } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

type Handler = (request: Request, context: unknown) => Promise<Response>;
interface Route {
  path: string;
  method: string;
  handler: Handler;
  segments: string[];
}

const API = path.join(process.cwd(), 'app', 'api');
function routeFiles(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((entry) => {
    const full = path.join(dir, entry.name);
    if (entry.isDirectory()) return routeFiles(full);
    return entry.name === 'route.ts' ? [full] : [];
  });
}

let database: Database;
let adminCookie: string;
let bridgeToken: string;
const routes: Route[] = [];
const realIds: Record<string, string> = {};
let adminId = '';

beforeAll(async () => {
  ({ database, bridgeToken } = await seededDatabase());
  adminCookie = await signIn('admin@fernhollow.example');
  for (const file of routeFiles(API)) {
    const relative = path.relative(API, path.dirname(file)).split(path.sep).join('/');
    if (relative === 'auth/sign-out') continue; // would end the session the fuzz runs in
    const handlers = (await import(/* @vite-ignore */ file)) as Record<string, unknown>;
    for (const method of ['GET', 'POST', 'PATCH', 'PUT', 'DELETE']) {
      if (typeof handlers[method] === 'function') {
        routes.push({ path: `/api/${relative}`, method, handler: handlers[method] as Handler, segments: [...relative.matchAll(/\[(\w+)\]/g)].map((m) => m[1]) });
      }
    }
  }
  const { results } = await body(await ingest(bridgeToken, [readingRecord('fuzz-00000001'), unparsedRecord('fuzz-00000002', 'noise')]));
  realIds.readingId = results[0].id;
  realIds.captureId = results[1].id;
  const [patient] = await database.db.select().from(patients).limit(1);
  realIds.patientId = patient.id;
  const staff = await database.db.select().from(staffUsers);
  adminId = staff.find((u) => u.email === 'admin@fernhollow.example')!.id;
  realIds.userId = staff.find((u) => u.email === 'vet@fernhollow.example')!.id;
});

const HOSTILE = [
  '\u0000',
  'name\u0000',
  '\ud800',
  'a\udc00b',
  '\u0007bell',
  '\u001b[31m',
  'x'.repeat(5000),
  '0000-01-01T00:00:00Z',
  '2026-02-30T10:00:00Z',
  '9999-12-31T23:59:59+14:00',
  '',
  ' ',
];
const hostileString = fc.oneof(fc.constantFrom(...HOSTILE), fc.string({ unit: 'binary', maxLength: 40 }), fc.string({ maxLength: 20 }));
const hostileValue = fc.oneof({ weight: 4, arbitrary: hostileString }, fc.integer(), fc.double(), fc.boolean(), fc.constant(null), fc.constant([]), fc.constant({}));

/** A valid body per route, so a hostile value in one field reaches the code behind validation. */
function seedBody(route: Route, run: number): Record<string, unknown> {
  const at = '2026-03-01T09:30:00+01:00';
  switch (`${route.method} ${route.path}`) {
    case 'POST /api/readings/[readingId]/void':
    case 'POST /api/captures/[captureId]/dismiss':
    case 'POST /api/orders/[orderId]/cancel':
    case 'POST /api/orders/[orderId]/abort':
      return { reason: 'control run' };
    case 'POST /api/readings/[readingId]/reassign':
      return { patientId: realIds.patientId, fromPatientId: realIds.patientId, reason: 'wrong patient' };
    case 'POST /api/readings/[readingId]/assign':
      return { patientId: realIds.patientId, method: 'manual' };
    case 'POST /api/readings/[readingId]/reviews':
      return { comment: 'looks fine', reviewed: false };
    case 'POST /api/alerts/[alertId]/acknowledge':
      return { note: 'called the owner' };
    case 'POST /api/captures/[captureId]/transcribe':
      return { analyte: 'cCRP', value: 12.3, unit: 'mg/L', measuredAt: at, sampleId: 'S-1', note: 'from the slip' };
    case 'POST /api/admin/staff':
      return { displayName: 'Rowan Fuzz', email: `fuzz${run}@fernhollow.example`, role: 'technician', password: 'long-enough-pass' };
    case 'POST /api/admin/bridges':
      return { name: 'Lab PC fuzz' };
    case 'POST /api/admin/instruments':
      return { code: `fuzz-${run}`, name: 'Fuzz reader', analytes: ['cCRP'], dialect: 'plain-printout', serialNumber: 'SN1' };
    case 'POST /api/orders':
      return { patientId: realIds.patientId, analyte: 'cCRP', sampleType: 'serum', orderedBy: adminId, sampleId: 'S-2', kitLot: 'L1', startedAt: at, note: 'n' };
    case 'POST /api/bridge/heartbeat':
      return { spoolDepth: 0, sources: [{ instrument: 'crp-reader', state: 'open', detail: 'ok', warnings: ['w'], lastByteAt: at }] };
    case 'POST /api/bridge/readings':
      return { records: [readingRecord(`fuzz-run-${run}`, { sampleId: 'S-3', measuredAt: at })] };
    case 'POST /api/auth/sign-in':
      return { email: 'tech@fernhollow.example', password: 'wrong' };
    case 'POST /api/setup':
      return { clinicName: 'Fuzz clinic', displayName: 'Fuzz', email: 'f@x.example', password: 'long-enough-pass' };
    default:
      return { name: 'x', reason: 'control run', note: 'n' };
  }
}

/** Every leaf path of a value (so one of them can be replaced). */
function leafPaths(value: unknown, prefix: (string | number)[] = []): (string | number)[][] {
  if (Array.isArray(value)) return value.flatMap((item, i) => leafPaths(item, [...prefix, i]));
  if (value && typeof value === 'object') return Object.entries(value).flatMap(([k, v]) => leafPaths(v, [...prefix, k]));
  return [prefix];
}
function withLeaf(value: Record<string, unknown>, at: (string | number)[], leaf: unknown) {
  const copy = structuredClone(value);
  let node: Record<string | number, unknown> = copy;
  for (const key of at.slice(0, -1)) node = node[key] as Record<string | number, unknown>;
  node[at[at.length - 1]] = leaf;
  return copy;
}

const segmentValue = fc.oneof({ weight: 3, arbitrary: fc.constant('real') }, fc.uuid(), hostileString);
let run = 0;

function build(route: Route, payload: unknown, segment: string, query: Record<string, string>) {
  const url = `${route.path}?${new URLSearchParams(query)}`;
  const auth = route.path.startsWith('/api/bridge/') ? { token: bridgeToken } : { cookie: adminCookie };
  const context = params(Object.fromEntries(route.segments.map((name) => [name, segment === 'real' ? (realIds[name] ?? crypto.randomUUID()) : segment])));
  const init = route.method === 'GET' ? { method: 'GET' } : { method: route.method, body: payload };
  return [request(url, { ...auth, ...init }), context] as const;
}

describe('fuzz: every route × hostile text, dates, shapes and path segments', () => {
  it('no 5xx from any route (fast-check: a valid body with one field made hostile, hostile queries and segments)', async () => {
    expect(routes.length).toBeGreaterThan(30);
    const failures: string[] = [];
    await fc.assert(
      fc.asyncProperty(
        fc.constantFrom(...routes.keys()),
        fc.nat(),
        hostileValue,
        segmentValue,
        fc.dictionary(fc.constantFrom('q', 'status', 'limit', 'patientId', 'mine'), hostileString, { maxKeys: 2 }),
        async (index, pick, leaf, segment, query) => {
          const route = routes[index];
          const seed = seedBody(route, ++run);
          const paths = leafPaths(seed);
          const payload = withLeaf(seed, paths[pick % paths.length], leaf);
          const response = await route.handler(...build(route, payload, segment, query));
          if (response.status >= 500) failures.push(`${route.method} ${route.path} ${JSON.stringify(payload).slice(0, 200)} ${JSON.stringify(query)} → ${response.status}`);
          return true;
        },
      ),
      { numRuns: 1500 },
    );
    expect(failures).toEqual([]);
  }, 300_000);
});

describe('the shared text rule names the field', () => {
  it('a NUL in a void reason is a 400 naming reason', async () => {
    const { POST } = await import('@/app/api/readings/[readingId]/void/route');
    const response = await POST(request('/api/readings/x/void', { cookie: adminCookie, body: { reason: 'bad\u0000run' } }), params({ readingId: realIds.readingId }));
    expect(response.status).toBe(400);
    const { error } = await body(response);
    expect(error.message).toContain('reason');
    expect(error.issues[0].path).toBe('reason');
  });

  it('a lone surrogate in a staff name is a 400 naming displayName', async () => {
    const { POST } = await import('@/app/api/admin/staff/route');
    const response = await POST(
      request('/api/admin/staff', { cookie: adminCookie, body: { displayName: 'Ro\ud800wan', email: 'ro@fernhollow.example', role: 'technician', password: 'long-enough-pass' } }),
      undefined,
    );
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('displayName');
  });

  it('search q=%00 is a 400 naming q', async () => {
    const { GET } = await import('@/app/api/patients/route');
    const response = await GET(request('/api/patients?q=%00', { cookie: adminCookie }), undefined);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('q');
  });

  it('a heartbeat detail with a NUL is a 400 naming sources.0.detail', async () => {
    const { POST } = await import('@/app/api/bridge/heartbeat/route');
    const response = await POST(
      request('/api/bridge/heartbeat', { token: bridgeToken, body: { spoolDepth: 0, sources: [{ instrument: 'crp-reader', state: 'open', detail: 'x\u0000' }] } }),
      undefined,
    );
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('sources.0.detail');
  });

  it('a bell character in a one-line name is refused; a line break in a multi-line reason is kept', async () => {
    const { textProblem } = await import('@/lib/validation/text');
    expect(textProblem('Rowan\u0007', false)).toMatch(/control/);
    expect(textProblem('first line\nsecond line', true)).toBeNull();
    expect(textProblem('first line\nsecond line', false)).toMatch(/single line/);
    // A surrogate pair (U+1F415, dog) is a real character, not a lone surrogate.
    expect(textProblem('\ud83d\udc15', false)).toBeNull();
  });
});

describe('instrument text is kept, made storable', () => {
  it('a lone surrogate in a bridge record (analyte, raw) is stored as U+FFFD, not a 500', async () => {
    const response = await ingest(bridgeToken, [readingRecord('fuzz-surrogate-1', { analyte: 'a\udc00b', raw: 'RESULT \ud800 12.3\n' })]);
    expect(response.status).toBe(200);
    const [{ id }] = (await body(response)).results;
    const { readings } = await import('@/db/schema');
    const { eq } = await import('drizzle-orm');
    const [row] = await database.db.select().from(readings).where(eq(readings.id, id));
    expect(row.raw).toBe('RESULT \ufffd 12.3\n');
  });
});

describe('dates are real and in range', () => {
  it('year 0000, 30 February and year 9999 are refused with a 400 on the bridge route; the good record is unaffected', async () => {
    for (const receivedAt of ['0000-01-01T00:00:00Z', '2026-02-30T10:00:00Z', '9999-12-31T00:00:00Z']) {
      const response = await ingest(bridgeToken, [{ ...readingRecord(`fuzz-date-${receivedAt.slice(0, 4)}${receivedAt.slice(5, 7)}`), receivedAt }]);
      expect(response.status).toBe(400);
      expect((await body(response)).error.issues[0].path).toBe('records.0.receivedAt');
    }
    // 29 February in a leap year (2024: divisible by 4, not by 100) is a real date.
    const leap = await ingest(bridgeToken, [{ ...readingRecord('fuzz-date-leap'), receivedAt: '2024-02-29T10:00:00Z' }]);
    expect(leap.status).toBe(200);
  });

  it('a transcribed measuredAt of year 0000 is a 400 naming measuredAt', async () => {
    const { POST } = await import('@/app/api/captures/[captureId]/transcribe/route');
    const response = await POST(
      request('/api/captures/x/transcribe', { cookie: adminCookie, body: { analyte: 'cCRP', value: 1, unit: 'mg/L', measuredAt: '0000-01-01T00:00:00Z' } }),
      params({ captureId: realIds.captureId }),
    );
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('measuredAt');
  });
});
