// Regression (lib/readings/queries.ts patientResults, orderBy(desc(readings.measuredAt), desc(readings.receivedAt))):
// PostgreSQL sorts NULLs first in DESC order (PostgreSQL docs, ORDER BY: "NULLS FIRST is the default for DESC
// order"). A reading whose instrument printed no time (measuredAt null — allowed by the contract) is listed above
// every dated result, however old it is, so the chart's "newest first" is wrong.
// Expected: order by coalesce(measuredAt, receivedAt) desc (or NULLS LAST with receivedAt next).
import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord } from './support';
import { GET as results } from '@/app/api/patients/[patientId]/results/route';
import { POST as assign } from '@/app/api/readings/[readingId]/assign/route';
import type { Database } from '@/db/client';
import { readings } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
});

describe("a patient's results, newest first", () => {
  it('puts an undated reading received 10 days ago below results measured since', async () => {
    const cookie = await signIn('tech@fernhollow.example');
    const biscuit = await patientByRecord(database.db, clinicId, 'FH-1001'); // seeded history: 6..1 days ago
    const id = await ingestOne(token, 'undated-0000001', { measuredAt: null });
    await database.db.update(readings).set({ receivedAt: new Date(Date.now() - 10 * 86_400_000) }).where(eq(readings.id, id));
    expect((await assign(request('/api/readings/x/assign', { cookie, body: { patientId: biscuit.id } }), params({ readingId: id }))).status).toBe(200);
    const list = (await body(await results(request('/api/patients/x/results', { cookie }), params({ patientId: biscuit.id })))).results;
    expect(list.map((r: { id: string }) => r.id).at(-1)).toBe(id);
  });
});
