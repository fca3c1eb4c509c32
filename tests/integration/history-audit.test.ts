import { sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, createOtherClinic, ingestOne, patientByRecord, staffByEmail, OTHER_CLINIC_PASSWORD } from './support';
import * as audit from '@/app/api/admin/audit/route';
import * as history from '@/app/api/patients/[patientId]/history/route';
import * as results from '@/app/api/patients/[patientId]/results/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as reassign from '@/app/api/readings/[readingId]/reassign/route';
import * as readingRoute from '@/app/api/readings/[readingId]/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import * as voidRoute from '@/app/api/readings/[readingId]/void/route';
import type { Database } from '@/db/client';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// "Nothing moved or voided disappears without a trace" and "reviews and comments stay with the patient
// they were written for" (issue 8), and the audit viewer over the append-only audit table (admins only;
// the roles table of the product brief: only administrators manage the clinic).

let database: Database;
let token: string;
let clinicId: string;
let c: { tech: string; vet: string; admin: string; other: string };
let p: { biscuit: string; juniper: string; moss: string };
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  await createOtherClinic(database.db);
  c = {
    tech: await signIn('tech@fernhollow.example'),
    vet: await signIn('vet@fernhollow.example'),
    admin: await signIn('admin@fernhollow.example'),
    other: await signIn('tech@tansyreach.example', OTHER_CLINIC_PASSWORD),
  };
  p = {
    biscuit: (await patientByRecord(database.db, clinicId, 'FH-1001')).id,
    juniper: (await patientByRecord(database.db, clinicId, 'FH-1002')).id,
    moss: (await patientByRecord(database.db, clinicId, 'FH-1003')).id,
  };
});

const newReading = () => ingestOne(token, `history-${String(++n).padStart(6, '0')}`);
const ok = async (response: Response, status = 200) => {
  if (response.status !== status) throw new Error(`${response.status} ${await response.text()}`);
  return body(response);
};
const assignTo = (readingId: string, patientId: string) =>
  assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId } }), params({ readingId })).then((r) => ok(r));
const takenOff = async (patientId: string) =>
  (await ok(await history.GET(request(`/api/patients/${patientId}/history`, { cookie: c.vet }), params({ patientId })))).takenOff;
const chartIds = async (patientId: string) =>
  (await ok(await results.GET(request(`/api/patients/${patientId}/results`, { cookie: c.vet }), params({ patientId })))).results.map((r: { id: string }) => r.id);

describe('results taken off a chart', () => {
  it('a moved result stays on the chart it left, with who, when and why, and its comment stays there', async () => {
    const readingId = await newReading();
    await assignTo(readingId, p.biscuit);
    await ok(await reviews.POST(request('/api/readings/x/reviews', { cookie: c.vet, body: { reviewed: true, comment: 'Fits Biscuit’s history' } }), params({ readingId })), 201);
    await ok(
      await reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId: p.juniper, fromPatientId: p.biscuit, reason: 'Tube label was Juniper’s' } }), params({ readingId })),
    );

    expect(await chartIds(p.biscuit)).not.toContain(readingId);
    const [entry] = (await takenOff(p.biscuit)).filter((e: { readingId: string }) => e.readingId === readingId);
    expect(entry).toMatchObject({
      outcome: 'moved',
      nowPatientRecordNumber: 'FH-1002',
      endReason: 'Tube label was Juniper’s',
      endedByName: (await staffByEmail(database.db, 'tech@fernhollow.example')).displayName,
      reviewed: { by: expect.any(String) },
      comments: [{ comment: 'Fits Biscuit’s history', by: expect.any(String), at: expect.any(String) }],
    });
    expect(Date.parse(entry.endedAt)).not.toBeNaN();

    // On Juniper's chart: the result, not reviewed, and its history without Biscuit's comment or sign-off.
    expect(await chartIds(p.juniper)).toContain(readingId);
    const chart = await ok(await results.GET(request(`/api/patients/${p.juniper}/results`, { cookie: c.vet }), params({ patientId: p.juniper })));
    const onJuniper = chart.results.find((r: { id: string }) => r.id === readingId);
    expect(onJuniper.clinical.reviewed).toBeNull();
    expect(onJuniper.clinical.comments).toEqual([]);
    const seen = await ok(await readingRoute.GET(request(`/api/readings/${readingId}?patientId=${p.juniper}`, { cookie: c.vet }), params({ readingId })));
    const actions = seen.reading.history.map((h: { action: string }) => h.action);
    expect(actions).toEqual(expect.arrayContaining(['reading.assigned', 'reading.reassigned']));
    expect(actions).not.toContain('reading.reviewed');
    expect(actions).not.toContain('reading.commented');
    // From Biscuit's side, the comment written for Biscuit is in the history.
    const fromBiscuit = await ok(await readingRoute.GET(request(`/api/readings/${readingId}?patientId=${p.biscuit}`, { cookie: c.vet }), params({ readingId })));
    expect(fromBiscuit.reading.history.map((h: { action: string }) => h.action)).toEqual(expect.arrayContaining(['reading.reviewed', 'reading.commented']));
    // Juniper's chart does not list it as taken off.
    expect((await takenOff(p.juniper)).map((e: { readingId: string }) => e.readingId)).not.toContain(readingId);
  });

  it('a voided result stays struck through on its chart with the reason', async () => {
    const readingId = await newReading();
    await assignTo(readingId, p.moss);
    await ok(await voidRoute.POST(request('/api/readings/x/void', { cookie: c.vet, body: { reason: 'Clotted sample', onRecord: true } }), params({ readingId })));
    expect(await chartIds(p.moss)).not.toContain(readingId);
    const [entry] = (await takenOff(p.moss)).filter((e: { readingId: string }) => e.readingId === readingId);
    expect(entry).toMatchObject({ outcome: 'voided', endReason: 'Clotted sample', nowPatientId: null });
  });

  it('a result moved away and back is a current result again, not a taken-off one', async () => {
    const readingId = await newReading();
    await assignTo(readingId, p.moss);
    const move = (patientId: string, fromPatientId: string) =>
      reassign.POST(request('/api/readings/x/reassign', { cookie: c.tech, body: { patientId, fromPatientId, reason: 'Checking the label' } }), params({ readingId }));
    await ok(await move(p.biscuit, p.moss));
    await ok(await move(p.moss, p.biscuit));
    expect(await chartIds(p.moss)).toContain(readingId);
    expect((await takenOff(p.moss)).map((e: { readingId: string }) => e.readingId)).not.toContain(readingId);
  });
});

describe('the audit viewer', () => {
  const view = (query: string, cookie = c.admin) => audit.GET(request(`/api/admin/audit?${query}`, { cookie }), undefined);

  it('is for administrators only', async () => {
    expect((await view('')).status).toBe(200);
    expect((await view('', c.vet)).status).toBe(403);
    expect((await view('', c.tech)).status).toBe(403);
    expect((await audit.GET(request('/api/admin/audit'), undefined)).status).toBe(401);
  });

  it('filters by patient, including moves away from it', async () => {
    const { events } = await ok(await view(`patientId=${p.biscuit}&limit=200`));
    const actions = events.map((e: { action: string }) => e.action);
    expect(actions).toEqual(expect.arrayContaining(['reading.assigned', 'reading.reviewed', 'reading.reassigned']));
    for (const e of events) {
      const names = [e.details.patientId, e.details.fromPatientId, e.entityType === 'patient' ? e.entityId : undefined];
      expect(names).toContain(p.biscuit);
    }
  });

  it('filters by person, by action (exact or a family) and by date, newest first, and pages', async () => {
    const vetId = (await staffByEmail(database.db, 'vet@fernhollow.example')).id;
    const byVet = (await ok(await view(`actorUserId=${vetId}&limit=200`))).events;
    expect(byVet.length).toBeGreaterThan(0);
    expect(new Set(byVet.map((e: { actorUserId: string }) => e.actorUserId))).toEqual(new Set([vetId]));
    const voids = (await ok(await view('action=reading.voided'))).events;
    expect(voids.map((e: { action: string }) => e.action)).toEqual(['reading.voided']);
    const family = (await ok(await view('action=reading.&limit=200'))).events;
    expect(family.every((e: { action: string }) => e.action.startsWith('reading.'))).toBe(true);
    const ids = family.map((e: { id: number }) => e.id);
    expect(ids).toEqual([...ids].sort((a, b) => b - a));
    // Paging: the second page starts below the first page's last id and overlaps nothing.
    const first = await ok(await view('action=reading.&limit=3'));
    const second = await ok(await view(`action=reading.&limit=3&before=${first.nextBefore}`));
    expect(second.events[0].id).toBeLessThan(first.events[2].id);
    // Dates: a range after today or long before holds nothing; an inverted range is the caller's mistake.
    const tomorrow = new Date(Date.now() + 2 * 86_400_000).toISOString().slice(0, 10);
    expect((await ok(await view(`from=${tomorrow}`))).events).toEqual([]);
    expect((await ok(await view(`to=2000-01-01`))).events).toEqual([]);
    expect((await view('from=2026-12-02&to=2026-12-01')).status).toBe(400);
  });

  it('shows only the admin’s own clinic', async () => {
    const { events } = await ok(await view('limit=200'));
    const [{ n: ours }] = await database.db.execute<{ n: number }>(sql`select count(*)::int as n from audit_events where clinic_id = ${clinicId}`).then((r) => r.rows);
    expect(events.length).toBe(Math.min(200, ours));
    expect(events.every((e: { details: Record<string, unknown> }) => JSON.stringify(e.details).indexOf('TR-0001') === -1)).toBe(true);
    expect((await view('', c.other)).status).toBe(403);
  });

  it('stays append-only: the table refuses updates and deletes', async () => {
    // The trigger of migration 0001 raises "audit_events is append-only"; drizzle wraps it as the cause.
    const refusal = (statement: ReturnType<typeof sql>) =>
      database.db.execute(statement).then(
        () => 'accepted',
        (error: { cause?: { message?: string } }) => error.cause?.message ?? String(error),
      );
    expect(await refusal(sql`update audit_events set action = 'x'`)).toMatch(/append-only/);
    expect(await refusal(sql`delete from audit_events`)).toMatch(/append-only/);
  });
});
