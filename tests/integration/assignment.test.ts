import { and, eq, isNull, sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, createOtherClinic, ingestOne, patientByRecord, staffByEmail } from './support';
import { GET as patientResultsRoute } from '@/app/api/patients/[patientId]/results/route';
import { GET as readingRoute } from '@/app/api/readings/[readingId]/route';
import { POST as assignRoute } from '@/app/api/readings/[readingId]/assign/route';
import { POST as voidRoute } from '@/app/api/readings/[readingId]/void/route';
import { GET as readingsRoute } from '@/app/api/readings/route';
import type { Database } from '@/db/client';
import { auditEvents, patients, readings, resultAssignments } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let bridgeId: string;
let techCookie: string;
let vetCookie: string;
let moss: { id: string };
let pepper: { id: string };
let other: Awaited<ReturnType<typeof createOtherClinic>>;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  bridgeId = (await database.db.query.bridges.findFirst())!.id;
  moss = await patientByRecord(database.db, clinicId, 'FH-1003');
  pepper = await patientByRecord(database.db, clinicId, 'FH-1004');
  other = await createOtherClinic(database.db);
  techCookie = await signIn('tech@fernhollow.example');
  vetCookie = await signIn('vet@fernhollow.example');
});

const newReading = () => ingestOne(token, `assign-${String(++n).padStart(8, '0')}`, { value: 40 + n });
const assign = (readingId: string, patientId: string, cookie = techCookie) =>
  assignRoute(request('/api/readings/x/assign', { cookie, body: { patientId } }), params({ readingId }));
const voidIt = (readingId: string, bodyValue: unknown, cookie = techCookie) =>
  voidRoute(request('/api/readings/x/void', { cookie, body: bodyValue }), params({ readingId }));
const readingRow = async (id: string) => (await database.db.select().from(readings).where(eq(readings.id, id)))[0];

describe('assigning a reading', () => {
  let readingId: string;

  it('a technician assigns an unassigned reading: 200, and the reading is on the patient', async () => {
    readingId = await newReading();
    const response = await assign(readingId, moss.id);
    expect(response.status).toBe(200);
    const { assignment } = await body(response);
    expect(assignment).toMatchObject({ readingId, patientId: moss.id });
    expect(await readingRow(readingId)).toMatchObject({ status: 'assigned', patientId: moss.id });

    const tech = await staffByEmail(database.db, 'tech@fernhollow.example');
    const rows = await database.db.select().from(resultAssignments).where(eq(resultAssignments.readingId, readingId));
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ id: assignment.assignmentId, patientId: moss.id, assignedBy: tech.id, method: 'manual', endedAt: null, clinicId });
  });

  it("appears in the patient's results and leaves the unassigned list", async () => {
    const results = await body(await patientResultsRoute(request('/api/patients/x/results', { cookie: vetCookie }), params({ patientId: moss.id })));
    // The chart is Moss's; each result still says whose it is.
    expect(results.results).toContainEqual(expect.objectContaining({ id: readingId, status: 'assigned', patientId: moss.id }));
    const unassigned = await body(await readingsRoute(request('/api/readings?status=unassigned', { cookie: techCookie }), undefined));
    expect(unassigned.readings.map((r: { id: string }) => r.id)).not.toContain(readingId);
    const assigned = await body(await readingsRoute(request('/api/readings?status=assigned', { cookie: techCookie }), undefined));
    expect(assigned.readings.map((r: { id: string }) => r.id)).toContain(readingId);
  });

  it('its history lists received (by the bridge) then assigned (by name)', async () => {
    const { reading } = await body(await readingRoute(request('/api/readings/x', { cookie: vetCookie }), params({ readingId })));
    expect(reading.history.map((h: { action: string }) => h.action)).toEqual(['reading.received', 'reading.assigned']);
    const [received, assigned] = reading.history;
    expect(received).toMatchObject({ byBridge: bridgeId, actorName: null });
    expect(assigned).toMatchObject({ actorName: 'Pia Hartwell', byBridge: null });
    expect(assigned.details).toMatchObject({ patientId: moss.id, recordNumber: 'FH-1003', method: 'manual' });
  });

  it('assigning again, to the same or another patient, is 409 already_assigned and moves nothing', async () => {
    for (const patientId of [moss.id, pepper.id]) {
      const response = await assign(readingId, patientId, vetCookie);
      expect(response.status).toBe(409); // RFC 9110 §15.5.10 Conflict
      const json = await body(response);
      expect(json.error.code).toBe('already_assigned');
      expect(json.error.patientId).toBe(moss.id);
    }
    expect(await readingRow(readingId)).toMatchObject({ status: 'assigned', patientId: moss.id });
    expect(await database.db.select().from(resultAssignments).where(eq(resultAssignments.readingId, readingId))).toHaveLength(1);
  });

  it('two assignments at once: exactly one wins, the other is 409', async () => {
    const id = await newReading();
    const responses = await Promise.all([assign(id, moss.id), assign(id, pepper.id, vetCookie)]);
    expect(responses.map((r) => r.status).sort()).toEqual([200, 409]);
    const open = await database.db
      .select()
      .from(resultAssignments)
      .where(and(eq(resultAssignments.readingId, id), isNull(resultAssignments.endedAt)));
    expect(open).toHaveLength(1);
    expect((await readingRow(id)).patientId).toBe(open[0].patientId);
  });
});

describe('assignment refusals', () => {
  it("a patient of another clinic is 404, and the reading stays unassigned", async () => {
    const id = await newReading();
    const response = await assign(id, other.patient.id);
    expect(response.status).toBe(404); // RFC 9110 §15.5.5: no such patient here, without saying it exists elsewhere
    expect((await body(response)).error.code).toBe('not_found');
    expect(await readingRow(id)).toMatchObject({ status: 'unassigned', patientId: null });
  });

  it("another clinic's staff cannot see or assign our reading (404)", async () => {
    const id = await newReading();
    const theirCookie = await signIn(other.tech.email, 'other-clinic-pass-1');
    expect((await assign(id, other.patient.id, theirCookie)).status).toBe(404);
    expect((await readingRoute(request('/api/readings/x', { cookie: theirCookie }), params({ readingId: id }))).status).toBe(404);
    expect((await patientResultsRoute(request('/api/patients/x/results', { cookie: theirCookie }), params({ patientId: moss.id }))).status).toBe(404);
  });

  it('an unknown patient id is 404, an id that is not a UUID is 400', async () => {
    const id = await newReading();
    expect((await assign(id, crypto.randomUUID())).status).toBe(404);
    const bad = await assign(id, 'FH-1003');
    expect(bad.status).toBe(400);
    expect((await body(bad)).error.issues.map((i: { path: string }) => i.path)).toEqual(['patientId']);
    expect((await assignRoute(request('/api/readings/x/assign', { cookie: techCookie, body: { patientId: moss.id } }), params({ readingId: 'nope' }))).status).toBe(400);
  });

  it("a closed patient record is 409 patient_inactive", async () => {
    const id = await newReading();
    const [closed] = await database.db
      .insert(patients)
      .values({ clinicId, recordNumber: 'FH-0999', name: 'Ember', species: 'cat', active: false })
      .returning();
    const response = await assign(id, closed.id);
    expect(response.status).toBe(409);
    expect((await body(response)).error.code).toBe('patient_inactive');
    expect((await readingRow(id)).status).toBe('unassigned');
  });
});

describe('voiding', () => {
  it('needs a reason: 400 without one, naming reason', async () => {
    const id = await newReading();
    for (const value of [{}, { reason: '' }, { reason: '  ' }]) {
      const response = await voidIt(id, value);
      expect(response.status).toBe(400);
      expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toEqual(['reason']);
    }
    expect((await readingRow(id)).status).toBe('unassigned');
  });

  it('with a reason: 200, voided, the reason in the audit trail; then it cannot be assigned or voided again (409)', async () => {
    const id = await newReading();
    const response = await voidIt(id, { reason: 'QC control sample, not a patient' });
    expect(response.status).toBe(200);
    expect(await body(response)).toEqual({ readingId: id, status: 'voided' });
    expect((await readingRow(id)).status).toBe('voided');

    const [event] = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.entityId, id), eq(auditEvents.action, 'reading.voided')));
    expect(event.details).toEqual({ reason: 'QC control sample, not a patient' });

    const assignAfter = await assign(id, moss.id);
    expect(assignAfter.status).toBe(409);
    expect((await body(assignAfter)).error.code).toBe('voided');
    expect((await voidIt(id, { reason: 'again' })).status).toBe(409);
    expect(await readingRow(id)).toMatchObject({ status: 'voided', patientId: null });
  });

  it('an assigned reading cannot be voided from Intake (409 already_assigned)', async () => {
    const id = await newReading();
    expect((await assign(id, pepper.id)).status).toBe(200);
    const response = await voidIt(id, { reason: 'wrong patient' });
    expect(response.status).toBe(409);
    expect((await body(response)).error.code).toBe('already_assigned');
    expect((await readingRow(id)).status).toBe('assigned');
  });
});

describe('the audit trail is append-only', () => {
  // db/migrations/0001_audit_append_only.sql: a BEFORE UPDATE OR DELETE trigger raises an exception.
  const refusal = async (query: ReturnType<typeof sql>) => {
    const error = await database.db.execute(query).then(() => null, (e: unknown) => e);
    expect(error, 'the statement should have been refused').not.toBeNull();
    return String((error as { cause?: { message?: string } }).cause?.message ?? (error as Error).message);
  };

  it('refuses a raw SQL UPDATE of audit_events', async () => {
    const [{ id }] = await database.db.select({ id: auditEvents.id }).from(auditEvents).limit(1);
    expect(await refusal(sql`update audit_events set action = 'tampered' where id = ${id}`)).toMatch(/append-only \(UPDATE refused\)/);
    const [row] = await database.db.select().from(auditEvents).where(eq(auditEvents.id, id));
    expect(row.action).not.toBe('tampered');
  });

  it('refuses a raw SQL DELETE from audit_events', async () => {
    const [{ n: before }] = await database.db.select({ n: sql<number>`count(*)::int` }).from(auditEvents);
    expect(before).toBeGreaterThan(0);
    expect(await refusal(sql`delete from audit_events`)).toMatch(/append-only \(DELETE refused\)/);
    const [{ n: after }] = await database.db.select({ n: sql<number>`count(*)::int` }).from(auditEvents);
    expect(after).toBe(before);
  });
});
