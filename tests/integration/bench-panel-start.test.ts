// "Start the whole panel" on the Bench: one request, one transaction. Every test of the panel starts, or
// none does, and a test that cannot start is named (all-or-none is the usual meaning of a database
// transaction, PostgreSQL docs §3.4 "Transactions"; status codes per RFC 9110 §15.5).
import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, patientByRecord } from './support';
import { POST as startPanelRoute } from '@/app/api/orders/panel/route';
import type { Database } from '@/db/client';
import { auditEvents, instruments, labOrders, staffUsers } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';

let database: Database;
let clinicId: string;
let techCookie: string;
let chemId: string;
let vetId: string;

const CHEMISTRY = ['GLU', 'CREA', 'BUN', 'ALT', 'ALP', 'TP', 'ALB'];

beforeAll(async () => {
  ({ database, clinicId } = await seededDatabase());
  techCookie = await signIn('tech@fernhollow.example');
  chemId = (await database.db.select().from(instruments).where(eq(instruments.code, 'chem-analyzer')))[0].id;
  vetId = (await database.db.select().from(staffUsers).where(eq(staffUsers.role, 'veterinarian')))[0].id;
});

const start = (value: Record<string, unknown>) => startPanelRoute(request('/api/orders/panel', { cookie: techCookie, body: value }), undefined);
const ordersOf = (patientId: string) => database.db.select().from(labOrders).where(and(eq(labOrders.patientId, patientId), eq(labOrders.status, 'open')));

describe('starting a reader’s whole panel', () => {
  it('starts all seven chemistry tests on one tube in one request, each with its own order and audit event', async () => {
    const patient = await patientByRecord(database.db, clinicId, 'FH-1005');
    const before = (await ordersOf(patient.id)).length;
    const response = await start({ patientId: patient.id, analytes: CHEMISTRY, instrumentId: chemId, sampleType: 'serum', sampleId: 'T-PANEL1', orderedBy: vetId });
    expect(response.status).toBe(201);
    const { orders } = await body(response);
    expect(orders.map((o: { analyte: string }) => o.analyte)).toEqual(CHEMISTRY);
    const running = await ordersOf(patient.id);
    expect(running.length - before).toBe(7);
    const mine = running.filter((o) => o.sampleId === 'T-PANEL1');
    // One sample, one run: the same start time on every test.
    expect(new Set(mine.map((o) => o.startedAt.toISOString())).size).toBe(1);
    const audits = await database.db.select().from(auditEvents).where(eq(auditEvents.action, 'order.started'));
    expect(mine.every((o) => audits.some((a) => a.entityId === o.id))).toBe(true);
  });

  it('a test the reader cannot run refuses the whole panel: 400 naming that test, and no test is left running', async () => {
    const patient = await patientByRecord(database.db, clinicId, 'FH-1004');
    const before = await ordersOf(patient.id);
    const response = await start({ patientId: patient.id, analytes: ['GLU', 'ALT', 'WBC'], instrumentId: chemId, sampleType: 'serum', orderedBy: vetId });
    expect(response.status).toBe(400);
    const { error } = await body(response);
    expect(error.message).toMatch(/^WBC could not start/);
    expect(error.issues[0].path).toBe('analytes.2');
    // GLU and ALT were started inside the transaction before WBC failed: they are rolled back.
    expect((await ordersOf(patient.id)).length).toBe(before.length);
  });

  it('refuses a panel without tests or with a test twice (400 on analytes), and one started more than a day ago (400 on startedAt)', async () => {
    const patient = await patientByRecord(database.db, clinicId, 'FH-1004');
    const base = { patientId: patient.id, instrumentId: chemId, sampleType: 'serum', orderedBy: vetId };
    const empty = await start({ ...base, analytes: [] });
    expect(empty.status).toBe(400);
    expect((await body(empty)).error.issues[0].path).toBe('analytes');
    const twice = await start({ ...base, analytes: ['GLU', 'GLU'] });
    expect(twice.status).toBe(400);
    expect((await body(twice)).error.issues[0].path).toBe('analytes');
    const old = await start({ ...base, analytes: ['GLU'], startedAt: new Date(Date.now() - 25 * 3_600_000).toISOString() });
    expect(old.status).toBe(400);
    expect((await body(old)).error.issues[0].path).toBe('startedAt');
  });

  it('is bench work: an administrator gets 403', async () => {
    const admin = await signIn('admin@fernhollow.example');
    const patient = await patientByRecord(database.db, clinicId, 'FH-1004');
    const response = await startPanelRoute(
      request('/api/orders/panel', { cookie: admin, body: { patientId: patient.id, analytes: ['GLU'], instrumentId: chemId, sampleType: 'serum', orderedBy: vetId } }),
      undefined,
    );
    expect(response.status).toBe(403);
  });
});
