import { and, eq, inArray, sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, readingRecord, unparsedRecord } from './support';
import { POST as createBridgeRoute } from '@/app/api/admin/bridges/route';
import { POST as revokeRoute } from '@/app/api/admin/bridges/[bridgeId]/revoke/route';
import { POST as heartbeatRoute } from '@/app/api/bridge/heartbeat/route';
import { POST as ingestRoute } from '@/app/api/bridge/readings/route';
import { GET as capturesRoute } from '@/app/api/captures/route';
import { GET as readingsRoute } from '@/app/api/readings/route';
import type { Database } from '@/db/client';
import { auditEvents, bridges, instruments, readings, unparsedCaptures } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let bridgeId: string;
let techCookie: string;
let adminCookie: string;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  const [bridge] = await database.db.select().from(bridges);
  bridgeId = bridge.id;
  techCookie = await signIn('tech@fernhollow.example');
  adminCookie = await signIn('admin@fernhollow.example');
});

type Results = { results: { key: string; status: 'created' | 'duplicate'; id: string }[] };
const count = async (table: typeof readings | typeof unparsedCaptures | typeof auditEvents) =>
  (await database.db.select({ n: sql<number>`count(*)::int` }).from(table))[0].n;

describe('a valid batch', () => {
  const batch = [
    readingRecord('batch1-00000001', {
      analyte: 'cCRP',
      value: 42.5,
      unit: 'mg/L',
      flags: ['H'],
      sampleId: 'S-2207',
      patientRef: 'FH-1003',
      measuredAt: '2024-05-01T10:00:00+01:00',
      instrumentSerial: 'SIM-0001',
    }),
    readingRecord('batch1-00000002', { value: 5, comparator: '<' }),
    readingRecord('batch1-00000003', { analyte: 'GLU', value: 5.4, unit: 'mmol/L' }, 'chem-analyzer'),
  ];
  let first: Results;

  it('is stored: 200 with one created result per record, in order', async () => {
    const before = await count(readings);
    const response = await ingest(token, batch);
    expect(response.status).toBe(200);
    first = await body(response);
    expect(first.results.map((r) => [r.key, r.status])).toEqual(batch.map((r) => [r.key, 'created']));
    for (const r of first.results) expect(r.id).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/);
    expect(await count(readings)).toBe(before + 3);
  });

  it('keeps every field, with the offset applied to measuredAt (RFC 3339 §4.2: +01:00 is one hour ahead of UTC)', async () => {
    const [row] = await database.db.select().from(readings).where(eq(readings.id, first.results[0].id));
    expect(row).toMatchObject({
      clinicId,
      bridgeId,
      idempotencyKey: 'batch1-00000001',
      instrumentCode: 'crp-reader',
      instrumentSerial: 'SIM-0001',
      analyte: 'cCRP',
      value: 42.5,
      comparator: null,
      unit: 'mg/L',
      flags: ['H'],
      sampleId: 'S-2207',
      patientRef: 'FH-1003',
      status: 'unassigned',
      patientId: null,
      raw: batch[0].payload.raw,
    });
    expect(row.measuredAt?.toISOString()).toBe('2024-05-01T09:00:00.000Z');
    const [lessThan] = await database.db.select().from(readings).where(eq(readings.id, first.results[1].id));
    expect([lessThan.comparator, lessThan.value]).toEqual(['<', 5]);
  });

  it('links each reading to the instrument configured under its code', async () => {
    const configured = await database.db.select().from(instruments).where(eq(instruments.clinicId, clinicId));
    const byCode = new Map(configured.map((i) => [i.code, i.id]));
    const rows = await database.db.select().from(readings).where(inArray(readings.id, first.results.map((r) => r.id)));
    for (const row of rows) expect(row.instrumentId).toBe(byCode.get(row.instrumentCode));
  });

  it('shows up in Intake (GET /api/readings)', async () => {
    const list = await body(await readingsRoute(request('/api/readings', { cookie: techCookie }), undefined));
    const listed = list.readings.map((r: { id: string }) => r.id);
    for (const r of first.results) expect(listed).toContain(r.id);
  });

  it('writes one reading.received audit event per created reading, by the bridge', async () => {
    const events = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.action, 'reading.received'), inArray(auditEvents.entityId, first.results.map((r) => r.id))));
    expect(events.map((e) => e.entityId).sort()).toEqual(first.results.map((r) => r.id).sort());
    for (const e of events) {
      expect(e).toMatchObject({ clinicId, actorBridgeId: bridgeId, actorUserId: null, entityType: 'reading' });
    }
  });

  it('sent again is acknowledged as all duplicates with the same ids, and nothing more is stored', async () => {
    // Idempotent retry: the same key names the same record (RFC 9110 §9.2.2 idea of idempotence, applied per key).
    const readingsBefore = await count(readings);
    const auditBefore = await count(auditEvents);
    const again = await body<Results>(await ingest(token, batch));
    expect(again.results).toEqual(first.results.map((r) => ({ ...r, status: 'duplicate' })));
    expect(await count(readings)).toBe(readingsBefore);
    expect(await count(auditEvents)).toBe(auditBefore);
  });

  it('a resend under the same key with different content keeps the first version', async () => {
    const changed = { ...batch[0], payload: { ...batch[0].payload, value: 999 } };
    const again = await body<Results>(await ingest(token, [changed]));
    expect(again.results).toEqual([{ key: batch[0].key, status: 'duplicate', id: first.results[0].id }]);
    const [row] = await database.db.select().from(readings).where(eq(readings.id, first.results[0].id));
    expect(row.value).toBe(42.5);
  });

  it('a partly new batch stores only the new record', async () => {
    const before = await count(readings);
    const mixed = await body<Results>(await ingest(token, [batch[1], readingRecord('batch1-00000004')]));
    expect(mixed.results.map((r) => r.status)).toEqual(['duplicate', 'created']);
    expect(mixed.results[0].id).toBe(first.results[1].id);
    expect(await count(readings)).toBe(before + 1);
  });

  it('the same key twice in one batch is stored once', async () => {
    const record = readingRecord('batch1-twice-001');
    const twice = await body<Results>(await ingest(token, [record, record]));
    expect(twice.results.map((r) => r.status)).toEqual(['created', 'duplicate']);
    expect(twice.results[0].id).toBe(twice.results[1].id);
  });
});

describe('unparsed fragments', () => {
  it('are stored as open captures, visible in GET /api/captures, next to the readings of the same batch', async () => {
    const raw = '\u0002LINE NOISE ?? 7F 7F\u0003\r\n';
    const response = await ingest(token, [readingRecord('mixed-00000001'), unparsedRecord('mixed-00000002', raw, 'no RESULT line')]);
    expect(response.status).toBe(200);
    const { results } = await body<Results>(response);
    expect(results.map((r) => r.status)).toEqual(['created', 'created']);

    const [capture] = await database.db.select().from(unparsedCaptures).where(eq(unparsedCaptures.id, results[1].id));
    expect(capture).toMatchObject({ clinicId, bridgeId, idempotencyKey: 'mixed-00000002', raw, reason: 'no RESULT line', status: 'open' });
    expect(await database.db.select().from(readings).where(eq(readings.id, results[1].id))).toHaveLength(0);

    const listed = await body(await capturesRoute(request('/api/captures', { cookie: techCookie }), undefined));
    expect(listed.captures).toContainEqual(
      expect.objectContaining({ id: results[1].id, raw, reason: 'no RESULT line', status: 'open', instrumentCode: 'crp-reader', instrumentName: 'CRP reader (bench 1)' }),
    );

    const [audit] = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, results[1].id));
    expect(audit).toMatchObject({ action: 'capture.received', entityType: 'unparsed_capture', actorBridgeId: bridgeId });
  });

  it('are idempotent too', async () => {
    const record = unparsedRecord('mixed-00000003', 'half a line', 'truncated');
    const a = await body<Results>(await ingest(token, [record]));
    const b = await body<Results>(await ingest(token, [record]));
    expect(b.results).toEqual([{ ...a.results[0], status: 'duplicate' }]);
    expect(await database.db.select().from(unparsedCaptures).where(eq(unparsedCaptures.idempotencyKey, 'mixed-00000003'))).toHaveLength(1);
  });
});

describe('instrument codes', () => {
  it('an unknown code is still stored, with instrumentId null and the code kept', async () => {
    const { results } = await body<Results>(await ingest(token, [readingRecord('unknown-0000001', {}, 'mystery-box')]));
    expect(results[0].status).toBe('created');
    const [row] = await database.db.select().from(readings).where(eq(readings.id, results[0].id));
    expect(row.instrumentId).toBeNull();
    expect(row.instrumentCode).toBe('mystery-box');
  });
});

describe('bridge authentication', () => {
  it('no token: 401 unauthenticated; bad token: 401 invalid_token; nothing stored', async () => {
    const before = await count(readings);
    const none = await ingestRoute(request('/api/bridge/readings', { body: { records: [readingRecord('auth-00000001')] } }), undefined);
    expect(none.status).toBe(401); // RFC 6750 §3.1 / RFC 9110 §15.5.2
    expect((await body(none)).error.code).toBe('unauthenticated');
    const bad = await ingest('bwb_' + 'x'.repeat(43), [readingRecord('auth-00000002')]);
    // RFC 6750 §3.1: invalid_token (expired, revoked, malformed or invalid) is answered with 401.
    expect(bad.status).toBe(401);
    expect((await body(bad)).error.code).toBe('invalid_token');
    expect(await count(readings)).toBe(before);
  });

  it('a second bridge keeps its own key space: the same key from it is a new reading', async () => {
    const created = await body(await createBridgeRoute(request('/api/admin/bridges', { cookie: adminCookie, body: { name: 'Lab PC (bench 2)' } }), undefined));
    const record = readingRecord('shared-00000001');
    const a = await body<Results>(await ingest(token, [record]));
    const b = await body<Results>(await ingest(created.token, [record]));
    expect(a.results[0].status).toBe('created');
    expect(b.results[0].status).toBe('created');
    expect(b.results[0].id).not.toBe(a.results[0].id);
    const [row] = await database.db.select().from(readings).where(eq(readings.id, b.results[0].id));
    expect(row.bridgeId).toBe(created.bridge.id);
  });

  it('a token revoked through the admin route is refused (401) for readings and heartbeats', async () => {
    const created = await body(await createBridgeRoute(request('/api/admin/bridges', { cookie: adminCookie, body: { name: 'Old laptop' } }), undefined));
    expect((await ingest(created.token, [readingRecord('revoke-00000001')])).status).toBe(200);
    const revoked = await revokeRoute(request('/api/admin/bridges/x/revoke', { method: 'POST', cookie: adminCookie }), params({ bridgeId: created.bridge.id }));
    expect(revoked.status).toBe(200);
    const refused = await ingest(created.token, [readingRecord('revoke-00000002')]);
    expect(refused.status).toBe(401);
    expect((await body(refused)).error.code).toBe('invalid_token');
    const beat = await heartbeatRoute(request('/api/bridge/heartbeat', { token: created.token, body: { spoolDepth: 0 } }), undefined);
    expect(beat.status).toBe(401);
    expect(await database.db.select().from(readings).where(eq(readings.idempotencyKey, 'revoke-00000002'))).toHaveLength(0);
  });
});

describe('bad requests', () => {
  it('malformed JSON: 400 invalid_json', async () => {
    const response = await ingestRoute(request('/api/bridge/readings', { token, body: '{"records": [' }), undefined);
    expect(response.status).toBe(400); // RFC 9110 §15.5.1; RFC 8259 (not JSON)
    expect((await body(response)).error.code).toBe('invalid_json');
  });

  it('a body that is not JSON by its Content-Type: 415', async () => {
    const response = await ingestRoute(
      request('/api/bridge/readings', { token, body: JSON.stringify({ records: [readingRecord('ct-000000001')] }), headers: { 'content-type': 'text/plain' } }),
      undefined,
    );
    expect(response.status).toBe(415); // RFC 9110 §15.5.16 Unsupported Media Type
    expect((await body(response)).error.code).toBe('unsupported_media_type');
  });

  it('a JSON Content-Type with a charset parameter is fine (RFC 9110 §8.3.1: parameters follow the type)', async () => {
    const response = await ingestRoute(
      request('/api/bridge/readings', { token, body: { records: [readingRecord('ct-000000002')] }, headers: { 'content-type': 'application/json; charset=utf-8' } }),
      undefined,
    );
    expect(response.status).toBe(200);
  });

  it('a schema violation: 400 invalid_request with issues naming the path, and nothing stored', async () => {
    const before = await count(readings);
    const bad = readingRecord('schema-0000001', { measuredAt: '2024-05-01T10:00:00' }); // no offset
    const response = await ingest(token, [readingRecord('schema-0000000'), bad]);
    expect(response.status).toBe(400);
    const json = await body(response);
    expect(json.error.code).toBe('invalid_request');
    expect(json.error.issues.map((i: { path: string }) => i.path)).toEqual(['records.1.payload.measuredAt']);
    expect(json.error.message).toContain('records.1.payload.measuredAt');
    expect(await count(readings)).toBe(before);
  });

  it('the first record named in a violation is records.0 when it is the bad one', async () => {
    const json = await body(await ingest(token, [readingRecord('schema-0000002', { measuredAt: 'soon' })]));
    expect(json.error.issues[0].path).toBe('records.0.payload.measuredAt');
  });

  it('an empty batch and one over 200 records are 400 on records', async () => {
    const empty = await body(await ingest(token, []));
    expect(empty.error.issues.map((i: { path: string }) => i.path)).toEqual(['records']);
    const tooMany = Array.from({ length: 201 }, (_, i) => readingRecord(`many-${String(i).padStart(8, '0')}`));
    const over = await ingest(token, tooMany);
    expect(over.status).toBe(400);
    expect((await body(over)).error.issues.map((i: { path: string }) => i.path)).toEqual(['records']);
  });

  it('a body over 2 MiB is 413 payload_too_large', async () => {
    const big = Array.from({ length: 40 }, (_, i) => readingRecord(`big-${String(i).padStart(8, '0')}`, { raw: 'x'.repeat(60_000) }));
    const response = await ingest(token, big);
    expect(response.status).toBe(413); // RFC 9110 §15.5.14 Content Too Large
    expect((await body(response)).error.code).toBe('payload_too_large');
  });
});

describe('heartbeat', () => {
  it('updates lastSeenAt and keeps the reported state', async () => {
    const old = new Date('2020-01-01T00:00:00Z');
    await database.db.update(bridges).set({ lastSeenAt: old, lastHeartbeat: null }).where(eq(bridges.id, bridgeId));
    const beat = { bridgeVersion: '0.1.0', spoolDepth: 3, sources: [{ instrument: 'crp-reader', state: 'open' }] };
    const response = await heartbeatRoute(request('/api/bridge/heartbeat', { token, body: beat }), undefined);
    expect(response.status).toBe(200);
    const json = await body(response);
    expect(json.ok).toBe(true);
    expect(Number.isNaN(Date.parse(json.serverTime))).toBe(false);
    const [row] = await database.db.select().from(bridges).where(eq(bridges.id, bridgeId));
    expect(row.lastSeenAt!.getTime()).toBeGreaterThan(old.getTime());
    expect(row.lastHeartbeat).toMatchObject(beat);
  });

  it('refuses a heartbeat without a spool depth (400, path spoolDepth)', async () => {
    const response = await heartbeatRoute(request('/api/bridge/heartbeat', { token, body: {} }), undefined);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toEqual(['spoolDepth']);
  });

  it('an ingest also counts as being seen', async () => {
    const old = new Date('2020-01-01T00:00:00Z');
    await database.db.update(bridges).set({ lastSeenAt: old }).where(eq(bridges.id, bridgeId));
    await ingest(token, [readingRecord('seen-00000001')]);
    const [row] = await database.db.select().from(bridges).where(eq(bridges.id, bridgeId));
    expect(row.lastSeenAt!.getTime()).toBeGreaterThan(old.getTime());
  });
});
