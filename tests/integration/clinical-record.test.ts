import { and, eq, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord, staffByEmail, waitForEvent } from './support';
import * as acknowledge from '@/app/api/alerts/[alertId]/acknowledge/route';
import * as alerts from '@/app/api/alerts/route';
import * as analyteRoute from '@/app/api/admin/clinical/analytes/[code]/route';
import * as intervalsRoute from '@/app/api/admin/clinical/intervals/route';
import * as results from '@/app/api/patients/[patientId]/results/route';
import * as reading from '@/app/api/readings/[readingId]/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as reassign from '@/app/api/readings/[readingId]/reassign/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import * as voidRoute from '@/app/api/readings/[readingId]/void/route';
import * as unreviewed from '@/app/api/reviews/unreviewed/route';
import type { Database } from '@/db/client';
import { resultAlerts, resultAssignments, resultReviews } from '@/db/schema';
import { subscribe } from '@/lib/live/bus';
import type { LiveEvent } from '@/lib/live/events';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Reassign, void, review and critical alerts on the patient's record, through the route handlers.
// Canine CRP defaults: upper limit 10 mg/L (from memory; Am J Vet Res 1987;48:919–921 found
// healthy dogs < 5 mg/L) and critical limit 100 mg/L (clinic policy placeholder, no published source).

let database: Database;
let token: string;
let clinicId: string;
let c: { tech: string; vet: string; vet2: string; admin: string };
let p: { biscuit: string; juniper: string; moss: string; willow: string };
let vetId: string;
const events: LiveEvent[] = [];
let unsubscribe: () => Promise<void>;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  unsubscribe = await subscribe((e) => events.push(e));
  c = {
    tech: await signIn('tech@fernhollow.example'),
    vet: await signIn('vet@fernhollow.example'),
    vet2: await signIn('vet2@fernhollow.example'),
    admin: await signIn('admin@fernhollow.example'),
  };
  p = {
    biscuit: (await patientByRecord(database.db, clinicId, 'FH-1001')).id,
    juniper: (await patientByRecord(database.db, clinicId, 'FH-1002')).id,
    moss: (await patientByRecord(database.db, clinicId, 'FH-1003')).id,
    willow: (await patientByRecord(database.db, clinicId, 'FH-1006')).id,
  };
  vetId = (await staffByEmail(database.db, 'vet@fernhollow.example')).id;
});
afterAll(async () => unsubscribe?.());

const newReading = (payload: Record<string, unknown> = {}) => ingestOne(token, `record-${String(++n).padStart(8, '0')}`, payload);
const assignTo = async (readingId: string, patientId: string) => {
  const response = await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId } }), params({ readingId }));
  expect(response.status).toBe(200);
  return (await body(response)).assignment;
};
const chart = async (patientId: string, cookie = c.vet) => body(await results.GET(request('/api/patients/x/results', { cookie }), params({ patientId })));
const history = async (readingId: string) =>
  (await body(await reading.GET(request('/api/readings/x', { cookie: c.vet }), params({ readingId })))).reading.history as { action: string; details: Record<string, unknown>; actorName: string }[];
const review = (readingId: string, value: unknown, cookie = c.vet) => reviews.POST(request('/api/readings/x/reviews', { cookie, body: value }), params({ readingId }));

describe('critical results alert the attending veterinarian', () => {
  let readingId: string;
  let alertId: string;

  it('">200 mg/L" on a dog is certainly above the critical limit: an alert for the attending vet, live', async () => {
    readingId = await newReading({ value: 200, comparator: '>', raw: 'RESULT >200 mg/L\n' });
    await assignTo(readingId, p.juniper);
    const [alert] = await database.db.select().from(resultAlerts).where(eq(resultAlerts.readingId, readingId));
    expect(alert).toMatchObject({ patientId: p.juniper, recipientId: vetId, kind: 'critical-high', threshold: 100, unit: 'mg/L', acknowledgedAt: null });
    // A ">" value is the instrument's upper measuring limit, shown as sent (no added decimal), as everywhere else.
    expect(alert.message).toBe('cCRP >200 mg/L for Juniper (FH-1002): above the critical limit 100 mg/L.');
    alertId = alert.id;
    const event = await waitForEvent(events, (e) => e.type === 'alert.created' && e.id === alertId);
    expect(event).toMatchObject({ clinicId, patientId: p.juniper, userId: vetId });
  });

  it('is listed for that vet (mine) and not for another vet’s own list', async () => {
    const mine = await body(await alerts.GET(request('/api/alerts?status=open&mine=1', { cookie: c.vet }), undefined));
    expect(mine.alerts.map((a: { id: string }) => a.id)).toContain(alertId);
    const theirs = await body(await alerts.GET(request('/api/alerts?status=open&mine=1', { cookie: c.vet2 }), undefined));
    expect(theirs.alerts.map((a: { id: string }) => a.id)).not.toContain(alertId);
    expect((await alerts.GET(request('/api/alerts?status=maybe', { cookie: c.vet }), undefined)).status).toBe(400);
  });

  it('only a veterinarian acknowledges (403 otherwise), once (409 again); then it leaves the open list', async () => {
    const ack = (cookie: string) => acknowledge.POST(request('/api/alerts/x/acknowledge', { cookie, body: { note: 'Called the owner' } }), params({ alertId }));
    expect((await ack(c.tech)).status).toBe(403);
    expect((await ack(c.admin)).status).toBe(403);
    expect((await ack(c.vet)).status).toBe(200);
    expect((await ack(c.vet2)).status).toBe(409);
    const open = await body(await alerts.GET(request('/api/alerts?status=open', { cookie: c.vet }), undefined));
    expect(open.alerts.map((a: { id: string }) => a.id)).not.toContain(alertId);
    expect((await history(readingId)).map((h) => h.action)).toContain('reading.critical-acknowledged');
  });

  it('a result within the interval raises no alert', async () => {
    const id = await newReading({ value: 6.2 });
    await assignTo(id, p.moss);
    expect(await database.db.select().from(resultAlerts).where(eq(resultAlerts.readingId, id))).toEqual([]);
  });
});

describe('the chart reads results in context', () => {
  it('flags, bands, changes and the delta check on Biscuit’s seeded post-operative series', async () => {
    const { results: list, analytes } = await chart(p.biscuit);
    expect(analytes.cCRP).toMatchObject({ unit: 'mg/L', interval: { high: 10, criticalHigh: 100 } });
    expect(analytes.cCRP.interval.source).toMatch(/Am J Vet Res 1987/);
    // Newest first: <5.0, 24.8, 61.0, 96.4, 8.1.
    const [latest, d2, d3, d4, d6] = list;
    expect(latest.clinical.flag).toMatchObject({ flag: 'normal', certain: true });
    expect(latest.clinical.change.text).toBe('at least −19.8 mg/L (at least −80%)');
    expect(d2.clinical.change.text).toBe('−36.2 mg/L (−59%)');
    expect(d3.clinical.flag.flag).toBe('high');
    expect(d4.clinical.band.label).toBe('Raised');
    // 8.1 → 96.4 in 2 days: over 20 mg/L and over 270% (J Vet Intern Med 2011, doi:10.1111/j.1939-1676.2011.0729.x).
    expect(d4.clinical.delta).toMatchObject({ flagged: true });
    expect(d4.clinical.delta.text).toMatch(/^Large change since the last result/);
    expect(d6.clinical.change).toBeNull();
    // Seeded reviews: all but the latest signed off.
    expect(list.map((r: { clinical: { reviewed: unknown } }) => r.clinical.reviewed !== null)).toEqual([false, true, true, true, true]);
  });

  it('a CRP result on a cat carries the species warning', async () => {
    const id = await newReading({ value: 12 });
    const assignment = await assignTo(id, p.willow);
    expect(assignment.speciesWarning).toBe('cCRP is validated for dogs; Willow is a cat. Interpret with care.');
    const { results: list } = await chart(p.willow);
    expect(list[0].clinical.speciesWarning).toBe(assignment.speciesWarning);
    expect(list[0].clinical.flag).toBeNull(); // no feline interval: not flagged rather than flagged wrongly
    expect(list[0].clinical.problems).toContain('No reference interval for cCRP in this species.');
  });

  it('an administrator can show CRP in mg/dL: values and interval convert through UCUM (1 mg/dL = 10 mg/L)', async () => {
    const patch = (cookie: string, value: unknown) => analyteRoute.PATCH(request('/api/admin/clinical/analytes/cCRP', { method: 'PATCH', cookie, body: value }), params({ code: 'cCRP' }));
    const settings = { displayUnit: 'mg/dL', decimals: 2, validatedSpecies: ['dog'], deltaAbsolute: 20, deltaPercent: 270, deltaWindowHours: 72 };
    expect((await patch(c.vet, settings)).status).toBe(403);
    expect((await patch(c.admin, { ...settings, displayUnit: 'mmol/L' })).status).toBe(400); // mass to moles: no
    expect((await patch(c.admin, { ...settings, displayUnit: 'furlongs' })).status).toBe(400);
    expect((await patch(c.admin, settings)).status).toBe(200);
    const { results: list, analytes } = await chart(p.biscuit);
    expect(analytes.cCRP).toMatchObject({ unit: 'mg/dL', interval: { high: 1, criticalHigh: 10 } });
    // Shown in another unit than printed, the value takes the analyte's decimals (2 here).
    expect(list[3].clinical.display).toEqual({ value: 9.64, comparator: null, unit: 'mg/dL', decimals: 2 });
    expect(list[0].clinical.display).toEqual({ value: 0.5, comparator: '<', unit: 'mg/dL', decimals: 2 });
    expect(list[3].clinical.delta.flagged).toBe(true); // limits stay in mg/L: the same answer in any display unit
    await patch(c.admin, { ...settings, displayUnit: 'mg/L', decimals: 1 });
  });

  it('an administrator changes an interval with a source; impossible limits are 400', async () => {
    const put = (cookie: string, value: Record<string, unknown>) =>
      intervalsRoute.POST(
        request('/api/admin/clinical/intervals', {
          cookie,
          body: { analyte: 'cCRP', species: 'dog', unit: 'mg/L', low: null, high: 10, criticalLow: null, criticalHigh: 100, source: 'In-house study 2026', ...value },
        }),
        undefined,
      );
    expect((await put(c.tech, {})).status).toBe(403);
    expect((await put(c.admin, { low: 20 })).status).toBe(400);
    expect((await put(c.admin, { criticalHigh: 5 })).status).toBe(400);
    expect((await put(c.admin, { source: '' })).status).toBe(400);
    expect((await put(c.admin, { unit: 'mmol/L' })).status).toBe(400);
    expect((await put(c.admin, { species: 'cat', analyte: 'NOPE' })).status).toBe(404);
    const ok = await put(c.admin, { high: 8 });
    expect(ok.status).toBe(200);
    expect((await chart(p.biscuit)).analytes.cCRP.interval).toMatchObject({ high: 8, source: 'In-house study 2026' });
    await put(c.admin, { high: 10, source: 'restored default' });
  });
});

describe('review and sign-off', () => {
  let readingId: string;
  it('only veterinarians review: technician and administrator get 403', async () => {
    readingId = await newReading({ value: 14.1 });
    await assignTo(readingId, p.juniper);
    expect((await review(readingId, { reviewed: true }, c.tech)).status).toBe(403);
    expect((await review(readingId, { reviewed: true }, c.admin)).status).toBe(403);
    expect((await review(readingId, {})).status).toBe(400);
  });

  it('appears in the attending vet’s unreviewed list until signed off; a second sign-off is 409; comments may follow', async () => {
    const list = async (cookie: string) => (await body(await unreviewed.GET(request('/api/reviews/unreviewed?mine=1', { cookie }), undefined))).results.map((r: { id: string }) => r.id);
    expect(await list(c.vet)).toContain(readingId);
    expect(await list(c.vet2)).not.toContain(readingId);
    expect((await review(readingId, { comment: 'Mild rise; recheck tomorrow.', reviewed: true })).status).toBe(201);
    expect(await list(c.vet)).not.toContain(readingId);
    expect((await review(readingId, { reviewed: true }, c.vet2)).status).toBe(409);
    expect((await review(readingId, { comment: 'Agree.' }, c.vet2)).status).toBe(201);
    const actions = (await history(readingId)).map((h) => [h.action, h.actorName]);
    expect(actions).toEqual(
      expect.arrayContaining([
        ['reading.commented', 'Dr. Ilse Corvan'],
        ['reading.reviewed', 'Dr. Ilse Corvan'],
        ['reading.commented', 'Dr. Teodor Lunn'],
      ]),
    );
  });

  it('reviews are append-only (a trigger refuses UPDATE and DELETE)', async () => {
    const refused = await database.db.execute(sql`update result_reviews set comment = 'edited'`).then(() => false, () => true);
    expect(refused).toBe(true);
    const refusedDelete = await database.db.execute(sql`delete from result_reviews`).then(() => false, () => true);
    expect(refusedDelete).toBe(true);
  });

  it('moving the result to another patient starts it unreviewed there; the old review stays in the history', async () => {
    const response = await reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId: p.moss, fromPatientId: p.juniper, reason: 'Tube labels swapped at the bench' } }), params({ readingId }));
    expect(response.status).toBe(200);
    expect((await chart(p.moss)).results.find((r: { id: string }) => r.id === readingId).clinical.reviewed).toBeNull();
    expect(await database.db.select().from(resultReviews).where(eq(resultReviews.readingId, readingId))).toHaveLength(3);
  });
});

describe('correcting a wrong match', () => {
  it('reassign needs a reason (400), a different patient (409) and an assigned reading (409)', async () => {
    const id = await newReading({ value: 22 });
    const call = (value: unknown) => reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: value }), params({ readingId: id }));
    expect((await call({ patientId: p.moss, fromPatientId: p.juniper, reason: 'wrong tube' })).status).toBe(409); // still unassigned
    await assignTo(id, p.juniper);
    expect((await call({ patientId: p.moss, fromPatientId: p.juniper })).status).toBe(400);
    expect((await call({ patientId: p.moss, fromPatientId: p.juniper, reason: ' ' })).status).toBe(400);
    const same = await call({ patientId: p.juniper, fromPatientId: p.juniper, reason: 'wrong tube' });
    expect(same.status).toBe(409);
    expect((await body(same)).error.code).toBe('same_patient');
  });

  it('reassign takes the patient the person saw: 409 patient_changed if the result moved meanwhile; 50 concurrent moves, one wins', async () => {
    // Optimistic concurrency (RFC 9110 §13.1.1 If-Match semantics, carried in the body): a stale view is refused, never last-wins.
    const id = await newReading({ value: 30 });
    await assignTo(id, p.juniper);
    const stale = await reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId: p.juniper, fromPatientId: p.moss, reason: 'wrong tube' } }), params({ readingId: id }));
    expect(stale.status).toBe(409);
    expect((await body(stale)).error.code).toBe('patient_changed');
    const moves = await Promise.all(
      Array.from({ length: 50 }, () =>
        reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId: p.moss, fromPatientId: p.juniper, reason: 'wrong tube' } }), params({ readingId: id })),
      ),
    );
    const statuses = moves.map((m) => m.status);
    expect(statuses.filter((st) => st === 200)).toHaveLength(1);
    expect(statuses.filter((st) => st === 409)).toHaveLength(49);
  });

  it('reassign ends the current assignment with the reason and opens a new one, in one step; the history keeps both', async () => {
    const id = await newReading({ value: 250, comparator: null });
    await assignTo(id, p.juniper);
    const [alertBefore] = await database.db.select().from(resultAlerts).where(eq(resultAlerts.readingId, id));
    expect(alertBefore.withdrawnAt).toBeNull();
    const response = await reassign.POST(request('/api/readings/x/reassign', { cookie: c.vet, body: { patientId: p.moss, fromPatientId: p.juniper, reason: 'Wrong patient: Moss’s sample' } }), params({ readingId: id }));
    expect(response.status).toBe(200);
    expect((await body(response)).assignment).toMatchObject({ fromPatientId: p.juniper, patientId: p.moss });
    const rows = await database.db.select().from(resultAssignments).where(eq(resultAssignments.readingId, id));
    expect(rows).toHaveLength(2);
    expect(rows.find((r) => r.patientId === p.juniper)).toMatchObject({ endReason: 'Wrong patient: Moss’s sample', endedBy: vetId });
    expect(rows.find((r) => r.patientId === p.moss)).toMatchObject({ endedAt: null });
    const h = await history(id);
    expect(h.map((x) => x.action)).toEqual(['reading.received', 'reading.assigned', 'reading.reassigned']);
    expect(h[2].details).toMatchObject({ fromPatientId: p.juniper, patientId: p.moss, reason: 'Wrong patient: Moss’s sample' });
    // The old patient's alert no longer applies; Moss's attending vet gets a new one.
    const all = await database.db.select().from(resultAlerts).where(eq(resultAlerts.readingId, id));
    expect(all.find((a) => a.patientId === p.juniper)!.withdrawnAt).not.toBeNull();
    expect(all.find((a) => a.patientId === p.moss)!.withdrawnAt).toBeNull();
    expect((await chart(p.juniper)).results.map((r: { id: string }) => r.id)).not.toContain(id);
  });

  it('void on the record needs onRecord: true; it ends the assignment and keeps it in the history', async () => {
    const id = await newReading({ value: 30 });
    await assignTo(id, p.juniper);
    const call = (value: unknown) => voidRoute.POST(request('/api/readings/x/void', { cookie: c.tech, body: value }), params({ readingId: id }));
    expect((await call({ reason: 'control material' })).status).toBe(409);
    expect((await call({ reason: 'control material', onRecord: 'yes' })).status).toBe(400);
    const response = await call({ reason: 'QC control run, not a patient', onRecord: true });
    expect(response.status).toBe(200);
    expect(await body(response)).toEqual({ readingId: id, status: 'voided' });
    const [row] = await database.db.select().from(resultAssignments).where(and(eq(resultAssignments.readingId, id)));
    expect(row).toMatchObject({ endReason: 'QC control run, not a patient' });
    const h = await history(id);
    expect(h.map((x) => x.action)).toEqual(['reading.received', 'reading.assigned', 'reading.voided']);
    expect(h[2].details).toMatchObject({ reason: 'QC control run, not a patient', fromPatientId: p.juniper });
    expect((await chart(p.juniper)).results.map((r: { id: string }) => r.id)).not.toContain(id);
  });
});
