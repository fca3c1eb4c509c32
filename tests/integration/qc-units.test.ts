// QC readings in another unit than their control's target, through ingest and the QC page's API: the
// Westgard rules see the value converted by UCUM (1 mg/dL = 10 mg/L: UCUM Table 1, prefix d deci = 1e-1,
// from memory), and a unit that does not convert is listed with why, never compared as if it did.
// 1-3s: one control value beyond mean ± 3 SD rejects the run (Westgard, Barry, Hunt, Groth, Clin Chem
// 1981;27:493–501, from memory).
import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { POST as addInstrumentRoute } from '@/app/api/admin/instruments/route';
import { POST as materialRoute } from '@/app/api/quality/materials/route';
import { POST as establishRoute } from '@/app/api/quality/materials/[materialId]/establish/route';
import { GET as qcRoute } from '@/app/api/quality/qc/route';
import type { Database } from '@/db/client';
import { readings } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { body, ingest, readingRecord } from './support';

const CODE = 'unit-check-reader';
let database: Database;
let token: string;
let tech: string;
let instrumentId: string;
let materialId: string;

let n = 0;
async function send(payload: Record<string, unknown>) {
  const response = await ingest(token, [readingRecord(`qc-units-${String(++n).padStart(6, '0')}`, { analyte: 'cCRP', sampleId: 'QC-U1', ...payload }, CODE)]);
  expect(response.status).toBe(200);
  return (await body(response)).results[0].id as string;
}
const overview = async () => body(await qcRoute(request('/api/quality/qc', { cookie: tech }), undefined));

beforeAll(async () => {
  ({ database, bridgeToken: token } = await seededDatabase());
  const admin = await signIn('admin@fernhollow.example');
  tech = await signIn('tech@fernhollow.example');
  const added = await addInstrumentRoute(
    request('/api/admin/instruments', { cookie: admin, body: { code: CODE, name: 'Unit check reader', analytes: ['cCRP'], dialect: 'plain-printout' } }),
    undefined,
  );
  expect(added.status).toBe(201);
  instrumentId = (await body(added)).instrument.id;
});

describe('control values and QC readings in different units', () => {
  it('a control must have a unit UCUM can read (400 on the unit field)', async () => {
    const bad = await materialRoute(
      request('/api/quality/materials', {
        cookie: tech,
        body: { analyte: 'cCRP', instrumentId, name: 'CRP control', lotNumber: 'U-1', level: '1', sampleId: 'QC-U1', unit: 'milligrams a litre', targetMean: 50, targetSd: 5 },
      }),
      undefined,
    );
    expect(bad.status).toBe(400);
    expect((await body(bad)).error.issues.map((i: { path: string }) => i.path)).toEqual(['unit']);
    const created = await materialRoute(
      request('/api/quality/materials', {
        cookie: tech,
        body: { analyte: 'cCRP', instrumentId, name: 'CRP control', lotNumber: 'U-1', level: '1', sampleId: 'QC-U1', unit: 'mg/L', targetMean: 50, targetSd: 5 },
      }),
      undefined,
    );
    expect(created.status).toBe(201);
    materialId = (await body(created)).material.id;
  });

  it('5.1 mg/dL on a target of 50 ± 5 mg/L is 51 mg/L, +0.2 SD: accepted (compared unconverted it would be −9 SD, a 1-3s rejection)', async () => {
    const id = await send({ value: 5.1, unit: 'mg/dL' });
    const [row] = await database.db.select().from(readings).where(eq(readings.id, id));
    expect(row).toMatchObject({ status: 'control', controlMaterialId: materialId, value: 5.1, unit: 'mg/dL' });
    const qc = await overview();
    const status = qc.status.find((s: { instrumentId: string }) => s.instrumentId === instrumentId);
    expect(status.status).toBe('accepted');
    const point = qc.controls.find((c: { id: string }) => c.id === materialId).points.at(-1);
    expect(point).toMatchObject({ id, value: 51, sent: { value: 5.1, unit: 'mg/dL' }, status: 'accepted', rules: [] });
    expect(point.z).toBeCloseTo(0.2, 10);
  });

  it('a converted value beyond 3 SD is still caught: 7.0 mg/dL = 70 mg/L, +4 SD, 1-3s', async () => {
    const id = await send({ value: 7, unit: 'mg/dL' });
    const qc = await overview();
    expect(qc.status.find((s: { instrumentId: string }) => s.instrumentId === instrumentId).status).toBe('rejected');
    expect(qc.controls.find((c: { id: string }) => c.id === materialId).points.at(-1)).toMatchObject({ id, value: 70, z: 4, rules: ['1-3s'] });
  });

  it('a reading in mmol/L (moles, not mass) is listed as not compared, with why, and no rule sees it', async () => {
    await send({ value: 49, unit: 'mg/L' }); // an accepted rerun, so the state below is the rerun's
    const before = await overview();
    const id = await send({ value: 0.5, unit: 'mmol/L' });
    const qc = await overview();
    expect(qc.unitProblems[0]).toMatchObject({ id, value: 0.5, unit: 'mmol/L', controlUnit: 'mg/L', materialId, message: expect.stringMatching(/^mmol\/L does not convert to the control’s mg\/L: .*molecular weight/) });
    const points = qc.controls.find((c: { id: string }) => c.id === materialId).points;
    expect(points.map((p: { id: string }) => p.id)).not.toContain(id);
    expect(qc.status.find((s: { instrumentId: string }) => s.instrumentId === instrumentId)).toEqual(before.status.find((s: { instrumentId: string }) => s.instrumentId === instrumentId));
  });

  it('within one bridge batch too: a control rerun in mg/dL clears the QC-failed mark for the patient reading after it', async () => {
    await send({ value: 7, unit: 'mg/dL' }); // 70 mg/L, +4 SD: rejected
    const batch = [
      readingRecord(`qc-units-batch-${String(++n).padStart(6, '0')}`, { analyte: 'cCRP', sampleId: 'QC-U1', value: 5.1, unit: 'mg/dL' }, CODE),
      readingRecord(`qc-units-batch-${String(++n).padStart(6, '0')}`, { analyte: 'cCRP', value: 14, unit: 'mg/L' }, CODE),
    ];
    const response = await ingest(token, batch);
    expect(response.status).toBe(200);
    const [controlId, patientId] = (await body(response)).results.map((r: { id: string }) => r.id);
    const rows = await database.db.select().from(readings).where(eq(readings.instrumentCode, CODE));
    expect(rows.find((r) => r.id === controlId)?.status).toBe('control');
    // 5.1 mg/dL is 51 mg/L (+0.2 SD, accepted); read as 5.1 mg/L it would be −9 SD and the patient result marked.
    expect(rows.find((r) => r.id === patientId)).toMatchObject({ status: 'unassigned', qualityMarks: [] });
  });

  it('a target established from 20 runs is in the control’s unit; a run in a unit that does not convert is left out, and the answer says so', async () => {
    const created = await materialRoute(
      request('/api/quality/materials', {
        cookie: tech,
        body: { analyte: 'cCRP', instrumentId, name: 'CRP control', lotNumber: 'U-1', level: '2', sampleId: 'QC-U2', unit: 'mg/L', targetMean: 1, targetSd: 1 },
      }),
      undefined,
    );
    const level2 = (await body(created)).material.id;
    // 10 × 9.8 and 9 × 10.2 mg/dL (98 and 102 mg/L), and one run in mmol/L that cannot be compared.
    for (let i = 0; i < 19; i++) await send({ sampleId: 'QC-U2', value: i < 10 ? 9.8 : 10.2, unit: 'mg/dL' });
    await send({ sampleId: 'QC-U2', value: 0.9, unit: 'mmol/L' });
    const establish = () => establishRoute(request(`/api/quality/materials/${level2}/establish`, { cookie: tech, body: {} }), params({ materialId: level2 }));
    const refused = await establish();
    expect(refused.status).toBe(409);
    expect((await body(refused)).error.message).toBe('19 runs so far; at least 20 are needed to establish a target. 1 run left out: unit not convertible to mg/L.');
    await send({ sampleId: 'QC-U2', value: 102, unit: 'mg/L' });
    const done = await establish();
    expect(done.status).toBe(200);
    // Mean 100 mg/L; sample SD (n − 1, common practice, no source): every run is 2 mg/L from the mean, √(20 × 4 / 19).
    const { material } = await body(done);
    expect(material.targetMean).toBeCloseTo(100, 9);
    expect(material.targetSd).toBeCloseTo(Math.sqrt(80 / 19), 9);
    expect(material.targetSource).toBe('established');
  });
});
