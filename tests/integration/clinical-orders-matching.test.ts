import { and, eq, isNull } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, patientByRecord, readingRecord, staffByEmail } from './support';
import * as orders from '@/app/api/orders/route';
import * as abort from '@/app/api/orders/[orderId]/abort/route';
import * as cancel from '@/app/api/orders/[orderId]/cancel/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as reassign from '@/app/api/readings/[readingId]/reassign/route';
import * as matchingReport from '@/app/api/admin/matching-report/route';
import * as suggestions from '@/app/api/readings/[readingId]/suggestions/route';
import * as allSuggestions from '@/app/api/readings/suggestions/route';
import * as adminClinical from '@/app/api/admin/clinical/route';
import * as protocolRoute from '@/app/api/admin/clinical/protocols/[protocolId]/route';
import type { Database } from '@/db/client';
import { auditEvents, labOrders, readings, resultAssignments, runProtocols } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Orders, ranked suggestions and the opt-in auto-assign rule through the real route handlers.
// Timing check value (common practice for a single-test CRP reader, no published source): due ≈ start + 12 min.

let database: Database;
let token: string;
let clinicId: string;
let cookies: { tech: string; vet: string; admin: string };
let ids: { juniper: string; pepper: string; willow: string; sprocket: string; vet: string; reader: string };
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  // The seed's demo bench orders would compete with the ones made here: clear them first.
  await database.db.update(labOrders).set({ status: 'cancelled', closeReason: 'test setup' }).where(eq(labOrders.clinicId, clinicId));
  cookies = {
    tech: await signIn('tech@fernhollow.example'),
    vet: await signIn('vet@fernhollow.example'),
    admin: await signIn('admin@fernhollow.example'),
  };
  const reader = (await database.db.query.instruments.findFirst({ where: (i, { eq }) => eq(i.code, 'crp-reader') }))!;
  ids = {
    juniper: (await patientByRecord(database.db, clinicId, 'FH-1002')).id,
    pepper: (await patientByRecord(database.db, clinicId, 'FH-1004')).id,
    willow: (await patientByRecord(database.db, clinicId, 'FH-1006')).id,
    sprocket: (await patientByRecord(database.db, clinicId, 'FH-1011')).id,
    vet: (await staffByEmail(database.db, 'vet@fernhollow.example')).id,
    reader: reader.id,
  };
});

const startOrder = (input: Record<string, unknown>, cookie = cookies.tech) =>
  orders.POST(request('/api/orders', { cookie, body: { analyte: 'cCRP', sampleType: 'whole_blood', orderedBy: ids.vet, ...input } }), undefined);

/** A bridge upload of one anonymous CRP reading, arriving at `arrivedAt`. */
async function reading(arrivedAt: Date, payload: Record<string, unknown> = {}) {
  const record = { ...readingRecord(`clinical-${String(++n).padStart(8, '0')}`, payload), receivedAt: arrivedAt.toISOString() };
  const response = await ingest(token, [record]);
  expect(response.status).toBe(200);
  return (await body(response)).results[0].id as string;
}

const closeAll = () => database.db.update(labOrders).set({ status: 'cancelled', closeReason: 'between cases' }).where(and(eq(labOrders.clinicId, clinicId), eq(labOrders.status, 'open')));

describe('starting a test', () => {
  it('computes the due time from the protocol: started at t, due at t + 725 s (about 12 min: mixing 30 s, re-insertion 10 s, incubation 660 s, measurement 25 s)', async () => {
    const startedAt = new Date(Date.now() - 60_000);
    const response = await startOrder({ patientId: ids.juniper, instrumentId: ids.reader, startedAt: startedAt.toISOString() });
    expect(response.status).toBe(201);
    const { order } = await body(response);
    expect(new Date(order.dueAt).getTime() - startedAt.getTime()).toBe(725_000);
    expect(order).toMatchObject({ status: 'open', patientId: ids.juniper, analyte: 'cCRP', fulfilledReadingId: null });
    const list = await body(await orders.GET(request('/api/orders?status=open', { cookie: cookies.vet }), undefined));
    expect(list.orders.map((o: { id: string }) => o.id)).toContain(order.id);
    const [event] = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityId, order.id), eq(auditEvents.action, 'order.started')));
    expect(event.actorUserId).toBe((await staffByEmail(database.db, 'tech@fernhollow.example')).id);
    await closeAll();
  });

  it('refuses bad input with 4xx JSON, never 500', async () => {
    const cases: [Record<string, unknown>, number][] = [
      [{ patientId: 'FH-1002' }, 400],
      [{ patientId: ids.juniper, sampleType: 'saliva' }, 400],
      [{ patientId: ids.juniper, startedAt: new Date(Date.now() + 3_600_000).toISOString() }, 400],
      [{ patientId: ids.juniper, startedAt: 'yesterday' }, 400],
      [{ patientId: ids.juniper, analyte: 'GLU', instrumentId: ids.reader }, 400],
      [{ patientId: ids.juniper, analyte: 'ZZZ' }, 409],
      [{ patientId: crypto.randomUUID() }, 404],
    ];
    for (const [input, status] of cases) {
      const response = await startOrder(input);
      expect(response.status, JSON.stringify(input)).toBe(status);
      expect(typeof (await body(response)).error.message).toBe('string');
    }
    const malformed = await orders.POST(request('/api/orders', { cookie: cookies.tech, body: '{"patientId":' }), undefined);
    expect(malformed.status).toBe(400);
  });

  it('is clinical work: an administrator gets 403; anonymous 401', async () => {
    expect((await startOrder({ patientId: ids.juniper }, cookies.admin)).status).toBe(403);
    expect((await orders.POST(request('/api/orders', { body: {} }), undefined)).status).toBe(401);
  });

  it('abort keeps the test counted as used; cancel does not; a closed test cannot be closed again (409)', async () => {
    const a = (await body(await startOrder({ patientId: ids.pepper }))).order;
    const c = (await body(await startOrder({ patientId: ids.pepper }))).order;
    const aborted = await abort.POST(request('/api/orders/x/abort', { cookie: cookies.tech, body: { reason: 'Cartridge not re-inserted within 10 s' } }), params({ orderId: a.id }));
    expect((await body(aborted)).order).toMatchObject({ status: 'aborted', testConsumed: true });
    const cancelled = await cancel.POST(request('/api/orders/x/cancel', { cookie: cookies.vet, body: { reason: 'Owner declined' } }), params({ orderId: c.id }));
    expect((await body(cancelled)).order).toMatchObject({ status: 'cancelled', testConsumed: false });
    expect((await abort.POST(request('/api/orders/x/abort', { cookie: cookies.tech, body: { reason: 'again' } }), params({ orderId: a.id }))).status).toBe(409);
    expect((await abort.POST(request('/api/orders/x/abort', { cookie: cookies.tech, body: {} }), params({ orderId: c.id }))).status).toBe(400);
  });
});

describe('suggestions for an anonymous reading', () => {
  it('rank the run that is due when the reading arrives first, with reasons', async () => {
    await closeAll();
    const now = Date.now();
    // Juniper's run started 12 min 5 s ago (due now); Pepper's 5 min ago (due in 7 min 5 s).
    const due = (await body(await startOrder({ patientId: ids.juniper, instrumentId: ids.reader, startedAt: new Date(now - 725_000).toISOString() }))).order;
    await startOrder({ patientId: ids.pepper, instrumentId: ids.reader, startedAt: new Date(now - 300_000).toISOString() });
    const readingId = await reading(new Date(now));
    const { suggestion } = await body(await suggestions.GET(request('/api/readings/x/suggestions', { cookie: cookies.tech }), params({ readingId })));
    // Pepper's run on the same single-channel reader cannot have finished: Juniper's, confidently.
    expect(suggestion.candidates[0]).toMatchObject({ patientId: ids.juniper, orderId: due.id });
    expect(suggestion.candidates[0].probability).toBeGreaterThan(0.999);
    expect(suggestion.confident).toBe(true);
    // Pepper's run entered on the same reader while Juniper's ran is said in words, not hidden.
    expect(suggestion.candidates[0].reasons.map((r: { code: string }) => r.code)).toEqual(['instrument-match', 'timing', 'reader-busy']);
    const board = await body(await allSuggestions.GET(request('/api/readings/suggestions', { cookie: cookies.tech }), undefined));
    expect(board.suggestions[readingId].candidates[0].patientId).toBe(ids.juniper);
    // Intake asks for the readings on its page: the same suggestion and no other; a bad id is a 400.
    const page = await body(await allSuggestions.GET(request(`/api/readings/suggestions?readings=${readingId}`, { cookie: cookies.tech }), undefined));
    expect(Object.keys(page.suggestions)).toEqual([readingId]);
    expect(page.suggestions[readingId]).toEqual(board.suggestions[readingId]);
    const bad = await allSuggestions.GET(request('/api/readings/suggestions?readings=not-a-reading', { cookie: cookies.tech }), undefined);
    expect(bad.status).toBe(400);

    // Confirming the suggestion fulfils the order; the order cannot take a second reading (409).
    const confirmed = await assign.POST(
      request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.juniper, orderId: due.id, method: 'suggestion' } }),
      params({ readingId }),
    );
    expect(confirmed.status).toBe(200);
    const [row] = await database.db.select().from(labOrders).where(eq(labOrders.id, due.id));
    expect(row).toMatchObject({ status: 'fulfilled', fulfilledReadingId: readingId, testConsumed: true });
    const [assignment] = await database.db.select().from(resultAssignments).where(eq(resultAssignments.readingId, readingId));
    expect(assignment).toMatchObject({ method: 'suggestion', orderId: due.id });

    const second = await reading(new Date(now + 5_000));
    const conflict = await assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.juniper, orderId: due.id } }), params({ readingId: second }));
    expect(conflict.status).toBe(409);
    expect((await body(conflict)).error).toMatchObject({ code: 'order_fulfilled', readingId });
    // Nothing moved: the second reading is still waiting.
    expect((await database.db.select().from(readings).where(eq(readings.id, second)))[0].status).toBe('unassigned');
  });

  it('an order of another patient, or for another test, is refused (409) and nothing is assigned', async () => {
    await closeAll();
    const pepperOrder = (await body(await startOrder({ patientId: ids.pepper, instrumentId: ids.reader, startedAt: new Date(Date.now() - 725_000).toISOString() }))).order;
    const readingId = await reading(new Date());
    const wrongPatient = await assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.juniper, orderId: pepperOrder.id } }), params({ readingId }));
    expect(wrongPatient.status).toBe(409);
    expect((await body(wrongPatient)).error.code).toBe('order_patient_mismatch');
    const glu = await reading(new Date(), { analyte: 'GLU', unit: 'mmol/L', value: 5.2 });
    const wrongTest = await assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.pepper, orderId: pepperOrder.id } }), params({ readingId: glu }));
    expect((await body(wrongTest)).error.code).toBe('order_analyte_mismatch');
    const open = await database.db.select().from(resultAssignments).where(and(eq(resultAssignments.readingId, readingId), isNull(resultAssignments.endedAt)));
    expect(open).toHaveLength(0);
  });

  it('two readings racing for one order: exactly one wins', async () => {
    await closeAll();
    const o = (await body(await startOrder({ patientId: ids.sprocket, instrumentId: ids.reader, startedAt: new Date(Date.now() - 725_000).toISOString() }))).order;
    const [r1, r2] = [await reading(new Date()), await reading(new Date())];
    const responses = await Promise.all(
      [r1, r2].map((readingId) => assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.sprocket, orderId: o.id } }), params({ readingId }))),
    );
    expect(responses.map((r) => r.status).sort()).toEqual([200, 409]);
    const [row] = await database.db.select().from(labOrders).where(eq(labOrders.id, o.id));
    expect([r1, r2]).toContain(row.fulfilledReadingId);
  });
});

describe('auto-assign on an exact sample ID (opt-in)', () => {
  it('is off by default: a reading with the tube label waits in Intake as a suggestion', async () => {
    await closeAll();
    await startOrder({ patientId: ids.pepper, instrumentId: ids.reader, sampleId: 'T-5001', startedAt: new Date(Date.now() - 725_000).toISOString() });
    const readingId = await reading(new Date(), { sampleId: 'T-5001' });
    expect((await database.db.select().from(readings).where(eq(readings.id, readingId)))[0]).toMatchObject({ status: 'unassigned', patientId: null });
    const { suggestion } = await body(await suggestions.GET(request('/api/readings/x/suggestions', { cookie: cookies.tech }), params({ readingId })));
    expect(suggestion.candidates[0]).toMatchObject({ patientId: ids.pepper });
    expect(suggestion.candidates[0].reasons.map((r: { code: string }) => r.code)).toContain('sample-id-match');
  });

  it('only an administrator may switch it on; then an exact tube label is placed at ingest, by the rule, in the history', async () => {
    const patch = (cookie: string, value: unknown) => adminClinical.PATCH(request('/api/admin/clinical', { method: 'PATCH', cookie, body: value }), undefined);
    expect((await patch(cookies.tech, { autoAssignExactId: true })).status).toBe(403);
    expect((await patch(cookies.vet, { autoAssignExactId: true })).status).toBe(403);
    expect((await patch(cookies.admin, { autoAssignExactId: 'yes' })).status).toBe(400);
    expect((await patch(cookies.admin, { autoAssignExactId: true, other: 1 })).status).toBe(400);
    // The settings also hold the critical-escalation ones (issue 11); only the switch matters here.
    expect((await body(await patch(cookies.admin, { autoAssignExactId: true }))).settings).toMatchObject({ autoAssignExactId: true });
    // An empty change keeps the switch as it is.
    expect((await body(await patch(cookies.admin, {}))).settings).toMatchObject({ autoAssignExactId: true });

    await closeAll();
    const o = (await body(await startOrder({ patientId: ids.pepper, instrumentId: ids.reader, sampleId: 'T-6001', startedAt: new Date(Date.now() - 725_000).toISOString() }))).order;
    const readingId = await reading(new Date(), { sampleId: 'T-6001' });
    expect((await database.db.select().from(readings).where(eq(readings.id, readingId)))[0]).toMatchObject({ status: 'assigned', patientId: ids.pepper });
    const [assignment] = await database.db.select().from(resultAssignments).where(eq(resultAssignments.readingId, readingId));
    expect(assignment).toMatchObject({ method: 'auto-sample-id', assignedBy: null, orderId: o.id });
    const history = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityId, readingId), eq(auditEvents.entityType, 'reading')));
    expect(history.map((h) => h.action)).toEqual(['reading.received', 'reading.assigned']);
    expect(history[1]).toMatchObject({ actorUserId: null, details: expect.objectContaining({ method: 'auto-sample-id', orderId: o.id }) });
  });

  it('even when on, never guesses: no ID, an unknown ID, or two tests with the same label stay in Intake', async () => {
    await closeAll();
    const started = new Date(Date.now() - 725_000).toISOString();
    await startOrder({ patientId: ids.pepper, instrumentId: ids.reader, sampleId: 'T-7001', startedAt: started });
    await startOrder({ patientId: ids.juniper, instrumentId: ids.reader, sampleId: 'T-7001', startedAt: started });
    for (const payload of [{}, { sampleId: 'T-9999' }, { sampleId: 'T-7001' }]) {
      const readingId = await reading(new Date(), payload);
      expect((await database.db.select().from(readings).where(eq(readings.id, readingId)))[0].status, JSON.stringify(payload)).toBe('unassigned');
    }
    // A cat for a dog-validated test (CRP: Vet Clin Pathol 2005;34:85–99) is left for a person.
    await closeAll();
    await startOrder({ patientId: ids.willow, instrumentId: ids.reader, sampleId: 'T-8001', startedAt: started });
    const catReading = await reading(new Date(), { sampleId: 'T-8001' });
    expect((await database.db.select().from(readings).where(eq(readings.id, catReading)))[0].status).toBe('unassigned');
  });
});

describe('run protocols are data an administrator changes', () => {
  it('a new incubation time moves the due time of tests started afterwards, not of tests already running', async () => {
    await closeAll();
    const [protocol] = await database.db.select().from(runProtocols).where(eq(runProtocols.clinicId, clinicId));
    const running = (await body(await startOrder({ patientId: ids.pepper }))).order;
    const stages = protocol.stages.map((s) => (s.key === 'incubate' ? { ...s, seconds: 600 } : s));
    const patch = (cookie: string, value: unknown) =>
      protocolRoute.PATCH(request('/api/admin/clinical/protocols/x', { method: 'PATCH', cookie, body: value }), params({ protocolId: protocol.id }));
    const valid = { name: protocol.name, stages, earlySeconds: 60, lateSeconds: 180, source: 'In-house timing check, 2026' };
    expect((await patch(cookies.tech, valid)).status).toBe(403);
    expect((await patch(cookies.admin, { ...valid, stages: [] })).status).toBe(400);
    expect((await patch(cookies.admin, { ...valid, stages: [...stages, stages[0]] })).status).toBe(400); // duplicate stage key
    expect((await patch(cookies.admin, { ...valid, source: '' })).status).toBe(400);
    expect((await patch(cookies.admin, valid)).status).toBe(200);

    const later = (await body(await startOrder({ patientId: ids.juniper }))).order;
    expect(new Date(later.dueAt).getTime() - new Date(later.startedAt).getTime()).toBe(665_000); // 30 + 10 + 600 + 25 s
    const [kept] = await database.db.select().from(labOrders).where(eq(labOrders.id, running.id));
    expect(kept.dueAt.getTime() - kept.startedAt.getTime()).toBe(725_000);
    await patch(cookies.admin, { ...valid, stages: protocol.stages, source: protocol.source });
  });
});

describe('moving a reading off a finished run', () => {
  // A run that printed its reading is over (common practice, no source: a single-test cartridge gives one
  // reading). Moving that reading to another patient must not put the run back on the Bench as overdue.
  const assignedReading = async () => {
    await closeAll();
    const order = (await body(await startOrder({ patientId: ids.juniper, instrumentId: ids.reader, startedAt: new Date(Date.now() - 725_000).toISOString() }))).order;
    const readingId = await reading(new Date());
    const placed = await assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.juniper, orderId: order.id, method: 'manual' } }), params({ readingId }));
    expect(placed.status).toBe(200);
    return { order, readingId };
  };
  const move = (readingId: string, extra: Record<string, unknown> = {}) =>
    reassign.POST(request('/api/readings/x/reassign', { cookie: cookies.tech, body: { patientId: ids.pepper, fromPatientId: ids.juniper, reason: 'Tube was Pepper’s', ...extra } }), params({ readingId }));

  it('closes the run as used with no reading, unless told otherwise; audited', async () => {
    const { order, readingId } = await assignedReading();
    expect((await move(readingId)).status).toBe(200);
    const [after] = await database.db.select().from(labOrders).where(eq(labOrders.id, order.id));
    expect(after).toMatchObject({ status: 'aborted', testConsumed: true, fulfilledReadingId: null });
    expect(after.closeReason).toMatch(/moved off \(Tube was Pepper’s\)/);
    const open = await body(await orders.GET(request('/api/orders?status=open', { cookie: cookies.tech }), undefined));
    expect(open.orders.map((o: { id: string }) => o.id)).not.toContain(order.id);
    const [event] = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityId, order.id), eq(auditEvents.action, 'order.closed')));
    expect(event.details).toMatchObject({ readingId, outcome: 'aborted', testConsumed: true });
  });

  it('reopens the run when the technician says it will still give a reading', async () => {
    const { order, readingId } = await assignedReading();
    expect((await move(readingId, { runWillGiveReading: true })).status).toBe(200);
    const [after] = await database.db.select().from(labOrders).where(eq(labOrders.id, order.id));
    expect(after).toMatchObject({ status: 'open', testConsumed: false, fulfilledReadingId: null });
    expect(await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityId, order.id), eq(auditEvents.action, 'order.reopened')))).toHaveLength(1);
    await closeAll();
  });
});

describe('the matching report (Admin)', () => {
  it('replays the last 30 days: lists a confident suggestion the technician did not keep; admins only', async () => {
    await closeAll();
    // Juniper's run is due now on the reader; the technician puts the reading on Pepper without a test.
    await startOrder({ patientId: ids.juniper, instrumentId: ids.reader, startedAt: new Date(Date.now() - 725_000).toISOString() });
    const readingId = await reading(new Date());
    const placed = await assign.POST(request('/api/readings/x/assign', { cookie: cookies.tech, body: { patientId: ids.pepper, method: 'manual' } }), params({ readingId }));
    expect(placed.status).toBe(200);
    expect((await matchingReport.GET(request('/api/admin/matching-report', { cookie: cookies.tech }), undefined)).status).toBe(403);
    const response = await matchingReport.GET(request('/api/admin/matching-report', { cookie: cookies.admin }), undefined);
    expect(response.status).toBe(200);
    const { report } = await body(response);
    expect(report.days).toBe(30);
    expect(report.confidentKept).toBeLessThan(report.confident);
    expect(report.notKept).toContainEqual(expect.objectContaining({ readingId, suggested: expect.objectContaining({ patientName: 'Juniper' }), kept: null }));
    await closeAll();
  });
});
