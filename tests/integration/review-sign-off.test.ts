import { and, eq, inArray } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord } from './support';
import * as signOff from '@/app/api/reviews/sign-off/route';
import * as unreviewed from '@/app/api/reviews/unreviewed/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import type { Database } from '@/db/client';
import { auditEvents, resultReviews } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// Review list sign-off of one or many results (README: veterinarians "sign results off on the chart or in
// Review"; the roles table: only veterinarians review). All or none, so a stale list signs nothing.

let database: Database;
let token: string;
let clinicId: string;
let c: { tech: string; vet: string };
let patientId: string;
let n = 0;

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  c = { tech: await signIn('tech@fernhollow.example'), vet: await signIn('vet@fernhollow.example') };
  patientId = (await patientByRecord(database.db, clinicId, 'FH-1004')).id;
});

const placed = async () => {
  const readingId = await ingestOne(token, `sign-off-${String(++n).padStart(6, '0')}`);
  const response = await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId } }), params({ readingId }));
  expect(response.status).toBe(200);
  return readingId;
};
const sign = (payload: unknown, cookie = c.vet) => signOff.POST(request('/api/reviews/sign-off', { cookie, body: payload }), undefined);
const unreviewedIds = async () =>
  (await body(await unreviewed.GET(request('/api/reviews/unreviewed?mine=0', { cookie: c.vet }), undefined))).results.map((r: { id: string }) => r.id);

describe('signing off from the Review list', () => {
  it('signs off several results at once with one comment, each audited', async () => {
    const ids = [await placed(), await placed(), await placed()];
    const response = await sign({ readingIds: ids.slice(0, 2), comment: 'In line with the clinical picture' });
    expect(response.status).toBe(201);
    expect((await body(response)).signedOff.sort()).toEqual(ids.slice(0, 2).sort());
    const left = await unreviewedIds();
    expect(left).toContain(ids[2]);
    expect(left).not.toContain(ids[0]);
    expect(left).not.toContain(ids[1]);
    const rows = await database.db.select().from(resultReviews).where(inArray(resultReviews.readingId, ids.slice(0, 2)));
    expect(rows.map((r) => `${r.kind}:${r.comment ?? ''}`).sort()).toEqual([
      'comment:In line with the clinical picture',
      'comment:In line with the clinical picture',
      'reviewed:',
      'reviewed:',
    ]);
    const audit = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.action, 'reading.reviewed'), inArray(auditEvents.entityId, ids)));
    expect(audit).toHaveLength(2);
  });

  it('signs off one result without a comment', async () => {
    const id = await placed();
    expect((await sign({ readingIds: [id] })).status).toBe(201);
    expect(await unreviewedIds()).not.toContain(id);
  });

  it('signs nothing when one of the batch is already signed off (all or none), naming it', async () => {
    const done = await placed();
    expect((await sign({ readingIds: [done] })).status).toBe(201);
    const fresh = await placed();
    const response = await sign({ readingIds: [fresh, done], comment: 'Both fine' });
    expect(response.status).toBe(409);
    const { error } = await body(response);
    expect(error.code).toBe('already_reviewed');
    expect(error.readingId).toBe(done);
    expect(error.message).toMatch(/^Nothing was signed off/);
    expect(await unreviewedIds()).toContain(fresh);
    expect(await database.db.select().from(resultReviews).where(eq(resultReviews.readingId, fresh))).toEqual([]);
  });

  it('is for veterinarians, and needs at least one result', async () => {
    const id = await placed();
    expect((await sign({ readingIds: [id] }, c.tech)).status).toBe(403);
    const empty = await sign({ readingIds: [] });
    expect(empty.status).toBe(400);
    expect((await body(empty)).error.issues[0].path).toBe('readingIds');
  });
});
