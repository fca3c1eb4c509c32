// The chart and the Review list are kept between requests (lib/view-cache.ts) and worked out again when
// what they read changes, told by triggers that bump record_versions (migration 0023). A kept view must
// never show what the database no longer says (a stale flag on a patient's result): common practice, no
// source. Checked three ways: every table the views read carries a version trigger (from the SQL the views
// run and the catalog, so a new table read without one fails here); a column left out of a column-list
// trigger is a decision named here; and after each kind of write the answers served equal fresh ones.
import { eq, sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { ingestOne, patientByRecord, staffByEmail } from './support';
import { GET as chartRoute } from '@/app/api/patients/[patientId]/results/route';
import { GET as reviewRoute } from '@/app/api/reviews/unreviewed/route';
import type { Database } from '@/db/client';
import { instruments, recordVersions, staffUsers } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { patientChart } from '@/lib/clinical/chart';
import { CHART_PAGE } from '@/lib/clinical/chart-page';
import { saveInterval } from '@/lib/clinical/config';
import { reviewResult, unreviewedResults } from '@/lib/clinical/review';
import { recordHeartbeat } from '@/lib/devices';
import { logTemperature } from '@/lib/quality/store';
import { assignReading, voidReading } from '@/lib/readings/assign';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let vetCookie: string;
let tech: Actor;
let vet: Actor;
let admin: Actor;
let patientId: string;

const actorOf = async (email: string): Promise<Actor> => {
  const u = await staffByEmail(database.db, email);
  return { userId: u.id, clinicId: u.clinicId, role: u.role, displayName: u.displayName, email: u.email };
};

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  vetCookie = await signIn('vet@fernhollow.example');
  [tech, vet, admin] = await Promise.all(['tech@fernhollow.example', 'vet@fernhollow.example', 'admin@fernhollow.example'].map(actorOf));
  patientId = (await patientByRecord(database.db, clinicId, 'FH-1001')).id;
});

let n = 0;
async function assignedReading(value: number) {
  const id = await ingestOne(token, `view-cache-${String(++n).padStart(6, '0')}`, { value });
  await assignReading(tech, id, patientId);
  return id;
}

const servedChart = async () => {
  const response = await chartRoute(request(`/api/patients/${patientId}/results?limit=${CHART_PAGE}`, { cookie: vetCookie }), params({ patientId }));
  expect(response.status).toBe(200);
  return JSON.parse(await response.text());
};
const freshChart = async () => JSON.parse(JSON.stringify(await patientChart(vet, patientId, { limit: CHART_PAGE })));
const servedReview = async () => {
  const response = await reviewRoute(request('/api/reviews/unreviewed', { cookie: vetCookie }), undefined);
  expect(response.status).toBe(200);
  return JSON.parse(await response.text());
};
const freshReview = async () => JSON.parse(JSON.stringify({ results: await unreviewedResults(vet, false) }));

async function expectServedFresh() {
  expect(await servedChart()).toEqual(await freshChart());
  expect(await servedReview()).toEqual(await freshReview());
}

const versions = async () => Object.fromEntries((await database.db.select().from(recordVersions)).map((r) => [r.scope, r.version]));

describe('kept views (chart, Review list)', () => {
  it('every table the chart and the Review list read bumps record_versions when written', async () => {
    await assignedReading(42);
    const read = new Set<string>();
    const session = (database.db as unknown as { session: { logger: { logQuery(q: string): void } } }).session;
    const before = session.logger;
    session.logger = { logQuery: (query) => [...query.matchAll(/\b(?:from|join)\s+"(\w+)"/gi)].forEach((m) => read.add(m[1])) };
    try {
      await patientChart(vet, patientId, { limit: CHART_PAGE });
      await unreviewedResults(vet, false);
    } finally {
      session.logger = before;
    }
    read.delete('record_versions');
    // The views read at least the tables the chart is made of (sanity for the capture itself).
    expect([...read]).toEqual(expect.arrayContaining(['readings', 'patients', 'reference_intervals', 'analyte_settings', 'result_reviews']));
    const triggered = await database.db
      .execute<{ relname: string }>(
        sql`select distinct c.relname from pg_trigger t join pg_class c on c.oid = t.tgrelid join pg_proc p on p.oid = t.tgfoid where p.proname like 'record_versions_bump_%'`,
      )
      .then((r) => r.rows);
    const withTrigger = new Set(triggered.map((r) => r.relname));
    expect([...read].filter((table) => !withTrigger.has(table))).toEqual([]);
  });

  it('column-list triggers leave out only the columns no view reads (link health, last sign-in)', async () => {
    const rows = await database.db
      .execute<{ table: string; column: string }>(
        sql`select c.relname as "table", a.attname as "column"
              from pg_trigger t join pg_class c on c.oid = t.tgrelid join pg_proc p on p.oid = t.tgfoid
              join pg_attribute a on a.attrelid = c.oid and a.attnum > 0 and not a.attisdropped
             where p.proname like 'record_versions_bump_%' and cardinality(t.tgattr::int2[]) > 0 and not (a.attnum = any (t.tgattr::int2[]))
             order by 1, 2`,
      )
      .then((r) => r.rows);
    // A new column on these tables lands here: add it to the trigger's list (migration), or here if no view reads it.
    expect(rows.map((r) => `${r.table}.${r.column}`)).toEqual(['instruments.health', 'staff_users.last_sign_in_at']);
  });

  it('serves what a fresh computation says after each kind of write', async () => {
    const first = await assignedReading(12);
    await expectServedFresh();
    // The same request again, nothing changed: the same answer.
    expect(await servedChart()).toEqual(await freshChart());

    // A new result on the record.
    await assignedReading(95);
    await expectServedFresh();
    // A sign-off with a comment.
    await reviewResult(vet, first, { reviewed: true, comment: 'Repeat in 48 h.' });
    await expectServedFresh();
    // The clinic's interval for the test changes the flag of every result.
    await saveInterval(admin, { analyte: 'cCRP', species: 'dog', instrumentId: null, unit: 'mg/L', low: 0, high: 5, criticalLow: null, criticalHigh: 60, bands: [], source: 'Test interval for the view cache (invented).' });
    const chart = await servedChart();
    expect(chart).toEqual(await freshChart());
    expect(chart.results.some((r: { clinical: { flag: { flag: string } | null } }) => r.clinical.flag?.flag === 'critical-high')).toBe(true);
    await expectServedFresh();
    // A room temperature out of range for today (a lab-quality mark).
    await logTemperature(admin, { day: new Date().toISOString().slice(0, 10), temperatureC: 35, note: null });
    await expectServedFresh();
    // A staff member's name, as shown beside a sign-off.
    await database.db.update(staffUsers).set({ displayName: 'Dr. Renamed for the test' }).where(eq(staffUsers.id, vet.userId));
    await expectServedFresh();
    // An instrument's name.
    await database.db.update(instruments).set({ name: 'Renamed reader' }).where(eq(instruments.clinicId, clinicId));
    await expectServedFresh();
    // A result taken off the record.
    await voidReading(tech, first, 'Sample was haemolysed (test).', { onRecord: true });
    await expectServedFresh();
  });

  it('a heartbeat or an unassigned reading changes no version (kept views stay kept)', async () => {
    await servedChart();
    const before = await versions();
    await recordHeartbeat({ id: (await database.db.query.bridges.findFirst())!.id, clinicId }, { sources: [{ instrument: 'crp-reader', state: 'open', warnings: [] }] } as never);
    await ingestOne(token, `view-cache-unassigned-${++n}`, { value: 3 });
    expect(await versions()).toEqual(before);
  });
});
