// A long record: the chart sends the newest results whole, a page at a time, and a trend point for every
// result; rows come out of the database as one JSON document (lib/bulk-select.ts). The reference for the
// JSON reader is Drizzle's own row mapping of the same select (drizzle-orm from the registry): the same
// rows, in the same order, with the same values and types (Date for timestamps, parsed jsonb, null for a
// left join without a match). That a panel's results are read together is common practice, no source.
import { asc, desc, eq, inArray, sql } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, patientByRecord, readingRecord } from './support';
import { GET as chartRoute } from '@/app/api/patients/[patientId]/results/route';
import { POST as panelAssignRoute } from '@/app/api/specimens/[specimenId]/assign/route';
import type { Database } from '@/db/client';
import { instruments, patients, readings, staffUsers } from '@/db/schema';
import { inJsonList, selectJsonRows } from '@/lib/bulk-select';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let tech: string;
let vet: string;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  [tech, vet] = await Promise.all([signIn('tech@fernhollow.example'), signIn('vet@fernhollow.example')]);
});

/** One analyzer run on one sample, put on the patient as a panel; minutes ago, so runs sort by age. */
async function run(patientId: string, minutesAgo: number, analytes: string[]) {
  const measuredAt = new Date(Date.now() - minutesAgo * 60_000).toISOString();
  const sampleId = `CP-${++n}`;
  const records = analytes.map((analyte, i) => readingRecord(`chart-page-${String(++n).padStart(8, '0')}`, { analyte, value: 20 + i + n / 100, unit: 'U/L', sampleId, measuredAt }, 'chem-analyzer'));
  const response = await ingest(token, records);
  expect(response.status).toBe(200);
  const ids: string[] = (await body(response)).results.map((r: { id: string }) => r.id);
  const [row] = await database.db.select({ specimenId: readings.specimenId }).from(readings).where(eq(readings.id, ids[0]));
  const assigned = await panelAssignRoute(request('/api/specimens/x/assign', { cookie: tech, body: { patientId, readingIds: ids } }), params({ specimenId: row.specimenId! }));
  expect(assigned.status).toBe(200);
  return ids;
}

const chart = async (patientId: string, query = '') => chartRoute(request(`/api/patients/${patientId}/results${query}`, { cookie: vet }), params({ patientId }));

describe('selectJsonRows reads what Drizzle reads', () => {
  it('gives the same rows, order, values and types as the same select run by Drizzle', async () => {
    const fields = {
      id: readings.id,
      status: readings.status,
      value: readings.value,
      flags: readings.flags,
      qualityMarks: readings.qualityMarks,
      measuredAt: readings.measuredAt,
      receivedAt: readings.receivedAt,
      instrumentName: instruments.name,
      patientName: patients.name,
      enteredByName: sql<string | null>`(select ${staffUsers.displayName} from ${staffUsers} where ${staffUsers.id} = ${readings.enteredBy})`,
    };
    const query = (select: ReturnType<typeof database.db.select<typeof fields>>) =>
      select
        .from(readings)
        .leftJoin(instruments, eq(instruments.id, readings.instrumentId))
        .leftJoin(patients, eq(patients.id, readings.patientId))
        .where(eq(readings.clinicId, clinicId))
        .orderBy(desc(sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`), desc(readings.receivedAt), asc(readings.arrival));
    const byDrizzle = await query(database.db.select(fields));
    const byJson = await selectJsonRows(database.db, fields, query);
    expect(byDrizzle.length).toBeGreaterThan(5);
    expect(byDrizzle.some((r) => r.patientName === null)).toBe(true); // unassigned readings: the left join found no patient
    expect(byJson).toEqual(byDrizzle);
    expect(byJson[0].receivedAt).toBeInstanceOf(Date);
  });

  it('gives an empty list for no rows, and inJsonList matches what inArray matches', async () => {
    const none = { id: readings.id };
    expect(await selectJsonRows(database.db, none, (select) => select.from(readings).where(eq(readings.clinicId, '00000000-0000-4000-8000-000000000000')))).toEqual([]);
    const some = (await database.db.select({ id: readings.id }).from(readings).where(eq(readings.clinicId, clinicId)).limit(3)).map((r) => r.id);
    const a = await database.db.select({ id: readings.id }).from(readings).where(inArray(readings.id, some)).orderBy(readings.id);
    const b = await database.db.select({ id: readings.id }).from(readings).where(inJsonList(readings.id, some)).orderBy(readings.id);
    expect(b).toEqual(a);
  });
});

describe("a long record's chart", () => {
  it('sends the newest results whole, never ends a page inside a panel, and has a trend point for every result', async () => {
    const fern = await patientByRecord(database.db, clinicId, 'FH-1006');
    const before = await body(await chart(fern.id, '?limit=100000'));
    // Four runs, newest first: 1 result, a 3-result panel, 1 result, 2 results.
    const newest = await run(fern.id, 1, ['ALT']);
    const panel = await run(fern.id, 2, ['GLU', 'CREA', 'BUN']);
    await run(fern.id, 3, ['ALP']);
    await run(fern.id, 4, ['TP', 'ALB']);
    const total = before.total + 7;

    const whole = await body(await chart(fern.id, '?limit=100000'));
    expect(whole.total).toBe(total);
    expect(whole.results).toHaveLength(total);

    // A page of 2 would cut the panel after its first result: it takes the whole panel (4 results).
    const page = await body(await chart(fern.id, '?limit=2'));
    expect(page.total).toBe(total);
    expect(page.results.map((r: { id: string }) => r.id)).toEqual(whole.results.slice(0, 4).map((r: { id: string }) => r.id));
    expect(new Set(page.results.slice(1).map((r: { id: string }) => r.id))).toEqual(new Set(panel));
    expect(page.results[0].id).toBe(newest[0]);
    // Each result on the page is what the whole chart says of it.
    expect(page.results).toEqual(whole.results.slice(0, 4));

    // The trend: every result, newest first, with the value, flag and change the whole chart shows.
    expect(page.trend).toHaveLength(total);
    expect(page.trend.map((p: { id: string }) => p.id)).toEqual(whole.results.map((r: { id: string }) => r.id));
    whole.results.forEach((r: { id: string; analyte: string; measuredAt: string | null; receivedAt: string; clinical: { display: unknown; change: { text: string } | null } }, i: number) => {
      const p = page.trend[i];
      expect(p.analyte).toBe(r.analyte);
      expect(p.display).toEqual(r.clinical.display);
      expect(p.change).toBe(r.clinical.change?.text ?? null);
      expect(new Date(p.at).getTime()).toBe(new Date(r.measuredAt ?? r.receivedAt).getTime());
    });
    expect(page.analytes).toEqual(whole.analytes);

    // The default page is 100 results.
    expect((await body(await chart(fern.id))).results).toHaveLength(Math.min(total, 100));
  });

  it('refuses a limit that is not a whole number of at least 1 with 400', async () => {
    const fern = await patientByRecord(database.db, clinicId, 'FH-1006');
    for (const limit of ['0', '-3', '2.5', 'many']) {
      const response = await chart(fern.id, `?limit=${limit}`);
      expect(response.status).toBe(400);
      expect((await body(response)).error.issues[0].path).toBe('limit');
    }
  });
});
