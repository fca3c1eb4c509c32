import { and, eq, sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord, staffByEmail } from './support';
import * as patientsRoute from '@/app/api/patients/route';
import * as patientRoute from '@/app/api/patients/[patientId]/route';
import * as statusRoute from '@/app/api/patients/[patientId]/status/route';
import * as mergeRoute from '@/app/api/patients/[patientId]/merge/route';
import * as results from '@/app/api/patients/[patientId]/results/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import * as reassign from '@/app/api/readings/[readingId]/reassign/route';
import * as readingRoute from '@/app/api/readings/[readingId]/route';
import type { Database } from '@/db/client';
import { auditEvents, owners, patients, resultAssignments, resultReviews } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Registering, editing, closing and merging patient records through the route handlers.
// What is checked comes from the issue's rules (technicians, veterinarians and admins register; every
// change audited; a record number unique per clinic; nothing half-saved; a merge keeps every result and
// its audit trail), and the error body from the API contract in DEVELOPERS.md ({"error":{code,message,issues}}).

let database: Database;
let token: string;
let clinicId: string;
let c: { tech: string; vet: string; admin: string };
let vetId: string;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  c = { tech: await signIn('tech@fernhollow.example'), vet: await signIn('vet@fernhollow.example'), admin: await signIn('admin@fernhollow.example') };
  vetId = (await staffByEmail(database.db, 'vet@fernhollow.example')).id;
});

const register = (payload: Record<string, unknown>, cookie = c.tech) =>
  patientsRoute.POST(request('/api/patients', { cookie, body: payload }), undefined);
const edit = (patientId: string, payload: Record<string, unknown>, cookie = c.tech) =>
  patientRoute.PATCH(request(`/api/patients/${patientId}`, { method: 'PATCH', cookie, body: payload }), params({ patientId }));
const auditFor = (entityType: string, entityId: string) =>
  database.db
    .select()
    .from(auditEvents)
    .where(and(eq(auditEvents.entityType, entityType), eq(auditEvents.entityId, entityId)))
    .orderBy(auditEvents.id);
const newReading = () => ingestOne(token, `patient-records-${String(++n).padStart(6, '0')}`);
const assignTo = async (readingId: string, patientId: string) => {
  const response = await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId } }), params({ readingId }));
  expect(response.status).toBe(200);
};

describe('registering a patient', () => {
  it('names every invalid field in a 400 and saves nothing', async () => {
    const before = await database.db.select({ n: sql<number>`count(*)::int` }).from(patients);
    const response = await register({
      recordNumber: '',
      name: 'Pip',
      species: 'axolotl',
      weightKg: -2,
      dateOfBirth: '2999-01-01',
      ownerEmail: 'not-an-address',
      ownerName: 'Ada Quell',
    });
    expect(response.status).toBe(400);
    const { error } = await body(response);
    expect(error.code).toBe('invalid_request');
    const paths = error.issues.map((i: { path: string }) => i.path);
    expect(paths).toEqual(expect.arrayContaining(['recordNumber', 'species', 'weightKg', 'dateOfBirth', 'ownerEmail']));
    // The message a person reads names the first field too.
    expect(error.message).toMatch(/recordNumber/);
    const after = await database.db.select({ n: sql<number>`count(*)::int` }).from(patients);
    expect(after[0].n).toBe(before[0].n);
  });

  it('refuses a date of birth together with an estimated age, on the field', async () => {
    const response = await register({ recordNumber: 'FH-3001', name: 'Pip', species: 'cat', dateOfBirth: '2020-01-01', ageYears: 3 });
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues).toEqual([{ path: 'dateOfBirth', message: expect.stringMatching(/not both/) }]);
  });

  it('registers with a new owner and an estimated age, audited, by a technician', async () => {
    const response = await register({
      recordNumber: 'FH-3002',
      name: 'Quill',
      species: 'ferret',
      sex: 'female_spayed',
      ageYears: 2,
      ageMonths: 6,
      weightKg: '0.9',
      ownerName: 'Ada Quell',
      ownerPhone: '+44 1632 960 123',
      ownerEmail: 'ada@quell.example',
      attendingVetId: vetId,
    });
    expect(response.status).toBe(201);
    const { patient } = await body(response);
    expect(patient).toMatchObject({ recordNumber: 'FH-3002', species: 'ferret', dateOfBirthEstimated: true, weightKg: 0.9, attendingVetId: vetId, status: 'active' });
    // 2 years 6 months before today (calendar arithmetic, common practice, no source).
    const today = new Date();
    const expected = new Date(Date.UTC(today.getUTCFullYear(), today.getUTCMonth() - 30, 1));
    expect(patient.dateOfBirth.slice(0, 7)).toBe(expected.toISOString().slice(0, 7));
    expect(patient.weightMeasuredOn).toBe(today.toISOString().slice(0, 10));
    const [owner] = await database.db.select().from(owners).where(eq(owners.id, patient.ownerId));
    expect(owner).toMatchObject({ name: 'Ada Quell', phone: '+44 1632 960 123', email: 'ada@quell.example' });
    const audit = await auditFor('patient', patient.id);
    expect(audit.map((a) => a.action)).toEqual(['patient.registered']);
    expect(audit[0].actorUserId).toBe((await staffByEmail(database.db, 'tech@fernhollow.example')).id);
    expect((await auditFor('owner', owner.id)).map((a) => a.action)).toEqual(['owner.created']);
  });

  it('veterinarians and administrators may register too', async () => {
    expect((await register({ recordNumber: 'FH-3003', name: 'Dot', species: 'dog' }, c.vet)).status).toBe(201);
    expect((await register({ recordNumber: 'FH-3004', name: 'Dash', species: 'dog' }, c.admin)).status).toBe(201);
  });

  it('refuses a record number the clinic already uses (any case of the rule: exact match), keeping no new owner', async () => {
    const ownersBefore = await database.db.select({ n: sql<number>`count(*)::int` }).from(owners);
    const response = await register({ recordNumber: 'FH-1001', name: 'Biscuit II', species: 'dog', ownerName: 'Someone New' });
    expect(response.status).toBe(409);
    const { error } = await body(response);
    expect(error.code).toBe('record_number_taken');
    expect(error.issues).toEqual([{ path: 'recordNumber', message: expect.any(String) }]);
    const ownersAfter = await database.db.select({ n: sql<number>`count(*)::int` }).from(owners);
    expect(ownersAfter[0].n).toBe(ownersBefore[0].n);
  });

  it('refuses an attending veterinarian who is not one, on the field', async () => {
    const techId = (await staffByEmail(database.db, 'tech@fernhollow.example')).id;
    const response = await register({ recordNumber: 'FH-3005', name: 'Nib', species: 'cat', attendingVetId: techId });
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('attendingVetId');
  });
});

describe('editing, searching and closing a record', () => {
  it('audits each changed field with its old and new value', async () => {
    const biscuit = await patientByRecord(database.db, clinicId, 'FH-1001');
    const { patient } = await body(await patientRoute.GET(request(`/api/patients/${biscuit.id}`, { cookie: c.tech }), params({ patientId: biscuit.id })));
    const response = await edit(biscuit.id, {
      recordNumber: patient.recordNumber,
      name: patient.name,
      species: patient.species,
      breed: patient.breed,
      sex: patient.sex,
      dateOfBirth: patient.dateOfBirth,
      weightKg: 32.4,
      weightMeasuredOn: '2026-11-30',
      ownerName: patient.ownerName,
      ownerPhone: patient.ownerPhone,
      ownerEmail: patient.ownerEmail,
      attendingVetId: patient.attendingVetId,
    });
    expect(response.status).toBe(200);
    expect((await body(response)).patient).toMatchObject({ weightKg: 32.4, weightMeasuredOn: '2026-11-30' });
    const audit = (await auditFor('patient', biscuit.id)).filter((a) => a.action === 'patient.updated');
    expect(audit).toHaveLength(1);
    expect(audit[0].details.changes).toEqual({ weightKg: [31.5, 32.4], weightMeasuredOn: [null, '2026-11-30'] });
  });

  it('searches by species and finds closed records only when asked', async () => {
    const search = async (query: string) =>
      (await body(await patientsRoute.GET(request(`/api/patients?${query}`, { cookie: c.tech }), undefined))).patients as { recordNumber: string }[];
    expect((await search('species=ferret')).map((p) => p.recordNumber)).toEqual(['FH-3002']);
    const dot = await patientByRecord(database.db, clinicId, 'FH-3003');
    const response = await statusRoute.POST(
      request(`/api/patients/${dot.id}/status`, { cookie: c.vet, body: { status: 'deceased', deceasedOn: '2026-11-28', reason: 'Died at home' } }),
      params({ patientId: dot.id }),
    );
    expect(response.status).toBe(200);
    expect((await body(response)).patient).toMatchObject({ status: 'deceased', active: false, deceasedOn: '2026-11-28' });
    expect((await search('q=Dot')).map((p) => p.recordNumber)).toEqual([]);
    expect((await search('q=Dot&status=deceased')).map((p) => p.recordNumber)).toEqual(['FH-3003']);
    // A closed record takes no new results.
    const readingId = await newReading();
    const refused = await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId: dot.id } }), params({ readingId }));
    expect(refused.status).toBe(409);
    const audit = (await auditFor('patient', dot.id)).find((a) => a.action === 'patient.status_changed');
    expect(audit?.details).toMatchObject({ from: 'active', to: 'deceased', reason: 'Died at home' });
  });

  it('refuses a status change without a reason, on the field', async () => {
    const dash = await patientByRecord(database.db, clinicId, 'FH-3004');
    const response = await statusRoute.POST(request(`/api/patients/${dash.id}/status`, { cookie: c.tech, body: { status: 'archived' } }), params({ patientId: dash.id }));
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('reason');
  });
});

describe('merging two records of one animal', () => {
  it('moves every result (current and taken off) with its reviews and keeps each audit trail', async () => {
    const keep = (await body(await register({ recordNumber: 'FH-4001', name: 'Marlow', species: 'dog' }))).patient;
    const dup = (await body(await register({ recordNumber: 'FH-4001-B', name: 'Marlow', species: 'dog' }))).patient;
    const other = await patientByRecord(database.db, clinicId, 'FH-1002');
    const [r1, r2, r3] = [await newReading(), await newReading(), await newReading()];
    await assignTo(r1, dup.id);
    await assignTo(r2, dup.id);
    await assignTo(r3, dup.id);
    // r1 signed off on the duplicate; r3 taken off the duplicate (moved to another patient).
    expect((await reviews.POST(request('/api/readings/x/reviews', { cookie: c.vet, body: { reviewed: true, comment: 'Seen' } }), params({ readingId: r1 }))).status).toBe(201);
    expect(
      (await reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId: other.id, fromPatientId: dup.id, reason: 'Wrong dog' } }), params({ readingId: r3 }))).status,
    ).toBe(200);
    const trailBefore = new Map<string, string[]>();
    for (const id of [r1, r2, r3]) trailBefore.set(id, (await auditFor('reading', id)).map((a) => a.action));

    const response = await mergeRoute.POST(
      request(`/api/patients/${keep.id}/merge`, { cookie: c.tech, body: { duplicatePatientId: dup.id, reason: 'Registered twice at the front desk' } }),
      params({ patientId: keep.id }),
    );
    expect(response.status).toBe(200);
    expect((await body(response)).merge).toMatchObject({ patientId: keep.id, mergedPatientId: dup.id, readings: 3 });

    // Both current results are now on the kept record, the sign-off with them.
    const chart = await body(await results.GET(request(`/api/patients/${keep.id}/results`, { cookie: c.vet }), params({ patientId: keep.id })));
    expect(chart.results.map((r: { id: string }) => r.id).sort()).toEqual([r1, r2].sort());
    expect(chart.results.find((r: { id: string }) => r.id === r1).clinical.reviewed).toMatchObject({ by: expect.any(String) });
    // Every assignment the duplicate had, the ended one too, now belongs to the kept record; reviews are untouched rows.
    const assignments = await database.db.select().from(resultAssignments).where(eq(resultAssignments.patientId, dup.id));
    expect(assignments).toEqual([]);
    const ended = await database.db.select().from(resultAssignments).where(and(eq(resultAssignments.readingId, r3), eq(resultAssignments.patientId, keep.id)));
    expect(ended).toHaveLength(1);
    expect(ended[0].endReason).toBe('Wrong dog');
    expect(await database.db.select().from(resultReviews).where(eq(resultReviews.readingId, r1))).toHaveLength(2);
    // Each reading's trail is what it was, plus one merge event.
    for (const id of [r1, r2, r3]) {
      const after = (await auditFor('reading', id)).map((a) => a.action);
      expect(after).toEqual([...trailBefore.get(id)!, 'reading.merged']);
    }
    // r3 itself stays where it was moved to.
    const moved = await body(await readingRoute.GET(request(`/api/readings/${r3}`, { cookie: c.vet }), params({ readingId: r3 })));
    expect(moved.reading.patientId).toBe(other.id);
    // The duplicate is closed and points at the kept record; both carry the merge in their audit trail.
    const [closed] = await database.db.select().from(patients).where(eq(patients.id, dup.id));
    expect(closed).toMatchObject({ status: 'merged', active: false, mergedIntoId: keep.id });
    expect((await auditFor('patient', keep.id)).map((a) => a.action)).toContain('patient.merged');
    const mergedInto = (await auditFor('patient', dup.id)).find((a) => a.action === 'patient.merged_into');
    expect(mergedInto?.details).toMatchObject({ keptRecordNumber: 'FH-4001', reason: 'Registered twice at the front desk' });
    expect((mergedInto?.details.readingIds as string[]).sort()).toEqual([r1, r2, r3].sort());
  });

  it('refuses to merge different species, a record into itself, or a record already merged', async () => {
    const cat = await patientByRecord(database.db, clinicId, 'FH-1006');
    const dog = await patientByRecord(database.db, clinicId, 'FH-1007');
    const merge = (into: string, duplicatePatientId: string) =>
      mergeRoute.POST(request(`/api/patients/${into}/merge`, { cookie: c.tech, body: { duplicatePatientId, reason: 'Same animal' } }), params({ patientId: into }));
    expect((await merge(dog.id, cat.id)).status).toBe(409);
    expect((await merge(dog.id, dog.id)).status).toBe(400);
    const dup = await patientByRecord(database.db, clinicId, 'FH-4001-B');
    const keep = await patientByRecord(database.db, clinicId, 'FH-4001');
    const again = await merge(keep.id, dup.id);
    expect(again.status).toBe(409);
    expect((await body(again)).error.issues[0].path).toBe('duplicatePatientId');
    // A merged record can no longer be edited.
    expect((await edit(dup.id, { recordNumber: 'FH-4001-B', name: 'Marlow', species: 'dog' })).status).toBe(409);
  });
});
