import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, patientByRecord, readingRecord, staffByEmail } from './support';
import * as orders from '@/app/api/orders/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import type { Database } from '@/db/client';
import { labOrders } from '@/db/schema';
import { abortProbability } from '@/lib/clinical/matching';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// The Bench's "probably aborted" is judged with the clinic's learned timing, the same estimate the matcher
// weighs readings with (lib/readings/suggestions.ts clinicTiming), sent with the list of running tests.
// Expected values are worked by hand from the estimator's definition (median and 1.4826 × MAD, blended
// with the defaults 0 s / 60 s at weight 20: Rousseeuw & Croux, JASA 1993 for the MAD constant).

let database: Database;
let token: string;
let clinicId: string;
let tech: string;
let ids: { juniper: string; vet: string; reader: string };

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  await database.db.update(labOrders).set({ status: 'cancelled', closeReason: 'test setup' }).where(eq(labOrders.clinicId, clinicId));
  tech = await signIn('tech@fernhollow.example');
  const reader = (await database.db.query.instruments.findFirst({ where: (i, { eq: e }) => e(i.code, 'crp-reader') }))!;
  ids = {
    juniper: (await patientByRecord(database.db, clinicId, 'FH-1002')).id,
    vet: (await staffByEmail(database.db, 'vet@fernhollow.example')).id,
    reader: reader.id,
  };
});

const openList = async () => body(await orders.GET(request('/api/orders?status=open', { cookie: tech }), undefined));

describe('the Bench uses the clinic learned timing', () => {
  it('no confirmed match yet: the defaults (due time right on average, spread 60 s)', async () => {
    expect((await openList()).timing).toEqual({ offsetSeconds: 0, spreadSeconds: 60, basedOn: 0 });
  });

  it('after one confirmed match 30 s late, the list carries the blended estimate, and a run overdue by 3 min is judged with it', async () => {
    const now = Date.now();
    // Started 12 min 5 s + 30 s ago: the reading arriving now is 30 s after the due time (725 s protocol).
    const started = await orders.POST(
      request('/api/orders', { cookie: tech, body: { analyte: 'cCRP', sampleType: 'whole_blood', orderedBy: ids.vet, patientId: ids.juniper, instrumentId: ids.reader, startedAt: new Date(now - 755_000).toISOString() } }),
      undefined,
    );
    expect(started.status).toBe(201);
    const order = (await body(started)).order;
    const upload = await ingest(token, [{ ...readingRecord('bench-timing-00000001'), receivedAt: new Date(now).toISOString() }]);
    const readingId = (await body(upload)).results[0].id as string;
    const confirmed = await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: ids.juniper, orderId: order.id, method: 'suggestion' } }), params({ readingId }));
    expect(confirmed.status).toBe(200);
    expect((await database.db.select().from(labOrders).where(eq(labOrders.id, order.id)))[0].status).toBe('fulfilled');

    // One offset, 30 s: median 30, MAD 0. Blended: (1·30 + 20·0)/21 = 1.428571 s; (1·0 + 20·60)/21 = 57.142857 s.
    const { timing } = await openList();
    expect(timing.basedOn).toBe(1);
    expect(timing.offsetSeconds).toBeCloseTo(30 / 21, 5);
    expect(timing.spreadSeconds).toBeCloseTo(1200 / 21, 5);
    // What the Bench shows for a run 180 s overdue differs from the defaults' figure: it is this clinic's.
    expect(abortProbability(180, timing)).not.toBeCloseTo(abortProbability(180), 3);
  });
});
