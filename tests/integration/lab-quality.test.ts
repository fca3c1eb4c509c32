// Lab quality end to end through the real route handlers: QC recognition at ingest (sample-ID pattern,
// the analyzer's own control marker, by hand in Intake), kit counting (patient, QC and aborted runs),
// the "QC failed" mark on the next patient result after a 1-3s rejection, room-temperature marks and
// reference-interval verification. Rule definitions: see tests/unit/quality-*.test.ts for sources.
import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { POST as addInstrumentRoute } from '@/app/api/admin/instruments/route';
import { GET as chartRoute } from '@/app/api/patients/[patientId]/results/route';
import { POST as abortRoute } from '@/app/api/orders/[orderId]/abort/route';
import { POST as startOrderRoute } from '@/app/api/orders/route';
import { PUT as operatingRangeRoute } from '@/app/api/quality/instruments/[instrumentId]/operating-range/route';
import { GET as kitLotsRoute, POST as kitLotRoute } from '@/app/api/quality/kit-lots/route';
import { POST as materialRoute } from '@/app/api/quality/materials/route';
import { POST as establishRoute } from '@/app/api/quality/materials/[materialId]/establish/route';
import { GET as qcRoute } from '@/app/api/quality/qc/route';
import { GET as healthRoute } from '@/app/api/quality/health/route';
import { POST as heartbeatRoute } from '@/app/api/bridge/heartbeat/route';
import { POST as temperatureRoute } from '@/app/api/quality/temperatures/route';
import { POST as verificationRoute } from '@/app/api/quality/verifications/route';
import { POST as assignRoute } from '@/app/api/readings/[readingId]/assign/route';
import { POST as markControlRoute } from '@/app/api/readings/[readingId]/control/route';
import { GET as readingsRoute } from '@/app/api/readings/route';
import { GET as unreviewedRoute } from '@/app/api/reviews/unreviewed/route';
import type { Database } from '@/db/client';
import { readings, referenceIntervals, roomTemperatureLogs } from '@/db/schema';
import { localDay } from '@/lib/quality/kits';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { body, ingest, patientByRecord, readingRecord } from './support';

let database: Database;
let token: string;
let clinicId: string;
let tech: string;
let vet: string;
let admin: string;
let instrumentId: string;
let lotId: string;
let materialId: string;
const CODE = 'qc-check-reader';

let n = 0;
async function send(payload: Record<string, unknown>) {
  const response = await ingest(token, [readingRecord(`labq-${String(++n).padStart(6, '0')}`, payload, CODE)]);
  expect(response.status).toBe(200);
  const id = (await body(response)).results[0].id as string;
  const [row] = await database.db.select().from(readings).where(eq(readings.id, id));
  return row;
}

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  [tech, vet, admin] = await Promise.all([signIn('tech@fernhollow.example'), signIn('vet@fernhollow.example'), signIn('admin@fernhollow.example')]);
  const added = await addInstrumentRoute(
    request('/api/admin/instruments', { cookie: admin, body: { code: CODE, name: 'QC check reader', analytes: ['cCRP'], dialect: 'plain-printout' } }),
    undefined,
  );
  expect(added.status).toBe(201);
  instrumentId = (await body(added)).instrument.id;
});

describe('kit lots and control materials', () => {
  it('a technician records a lot of 20 tests loaded in the reader, and a control level with its insert target', async () => {
    const lot = await kitLotRoute(
      request('/api/quality/kit-lots', {
        cookie: tech,
        body: { analyte: 'cCRP', lotNumber: 'L-TEST-1', expiresOn: '2099-12-31', testsPerKit: 20, openedOn: '2026-11-30', instrumentId, lowAt: 3 },
      }),
      undefined,
    );
    expect(lot.status).toBe(201);
    lotId = (await body(lot)).kitLot.id;
    const material = await materialRoute(
      request('/api/quality/materials', {
        cookie: tech,
        body: { analyte: 'cCRP', instrumentId, name: 'CRP control', lotNumber: 'C-1', level: '1', sampleId: 'QC-L1', unit: 'mg/L', targetMean: 50, targetSd: 5 },
      }),
      undefined,
    );
    expect(material.status).toBe(201);
    materialId = (await body(material)).material.id;
  });

  it('a veterinarian may not change lab-quality records (403), and a bad lot is a 400 naming the field', async () => {
    const forbidden = await kitLotRoute(request('/api/quality/kit-lots', { cookie: vet, body: { analyte: 'cCRP', lotNumber: 'X', expiresOn: '2099-01-01', testsPerKit: 5 } }), undefined);
    expect(forbidden.status).toBe(403);
    const bad = await kitLotRoute(request('/api/quality/kit-lots', { cookie: tech, body: { analyte: 'cCRP', lotNumber: 'X', expiresOn: '31/12/2099', testsPerKit: 0 } }), undefined);
    expect(bad.status).toBe(400);
    const issues = (await body(bad)).error.issues.map((i: { path: string }) => i.path);
    expect(issues).toEqual(expect.arrayContaining(['expiresOn', 'testsPerKit']));
  });
});

describe('QC runs at ingest', () => {
  it('a sample ID matching the clinic pattern (^QC by default) is a control run: not in Intake, never on a patient', async () => {
    const qc = await send({ sampleId: 'QC-L1', value: 51 });
    expect(qc.status).toBe('control');
    expect(qc.controlMaterialId).toBe(materialId);
    expect(qc.kitLotId).toBe(lotId);
    const waiting = await body(await readingsRoute(request('/api/readings?status=unassigned', { cookie: tech }), undefined));
    expect(waiting.readings.map((r: { id: string }) => r.id)).not.toContain(qc.id);
    const patient = await patientByRecord(database.db, clinicId, 'FH-1001');
    const assign = await assignRoute(request(`/api/readings/${qc.id}/assign`, { cookie: tech, body: { patientId: patient.id } }), params({ readingId: qc.id }));
    expect(assign.status).toBe(409);
    expect((await body(assign)).error.code).toBe('control_run');
  });

  it('a patient reading while QC is accepted carries the lot and no QC mark', async () => {
    const r = await send({ value: 12 });
    expect(r.status).toBe('unassigned');
    expect(r.kitLotId).toBe(lotId);
    expect(r.qualityMarks).toEqual([]);
  });

  it('a control beyond 3 SD (70 on 50 ± 5 is +4 SD: 1-3s) rejects QC, and the next patient result is marked "QC failed"', async () => {
    await send({ sampleId: 'QC-L1', value: 70 });
    const qc = await body(await qcRoute(request('/api/quality/qc', { cookie: tech }), undefined));
    const status = qc.status.find((s: { instrumentId: string }) => s.instrumentId === instrumentId);
    expect(status.status).toBe('rejected');
    expect(status.rejections[0].violations.map((v: { rule: string }) => v.rule)).toEqual(['1-3s']);
    const control = qc.controls.find((c: { id: string }) => c.id === materialId);
    expect(control.points.at(-1)).toMatchObject({ value: 70, z: 4, status: 'rejected', rules: ['1-3s'] });
    const patient = await send({ value: 14 });
    expect(patient.qualityMarks).toEqual(['qc-failed']);
  });

  it('the analyzer’s own control marker (specimenRole control) is a QC run too; an accepted rerun clears the mark for later results', async () => {
    const rerun = await send({ sampleId: 'QC-L1', value: 49, specimenRole: 'control' });
    expect(rerun.status).toBe('control');
    const later = await send({ value: 15 });
    expect(later.qualityMarks).toEqual([]);
  });

  it('a technician marks a waiting reading as a control by hand; it leaves Intake', async () => {
    const r = await send({ sampleId: 'C1-RERUN', value: 52 });
    expect(r.status).toBe('unassigned');
    const marked = await markControlRoute(request(`/api/readings/${r.id}/control`, { cookie: tech, body: { controlMaterialId: materialId } }), params({ readingId: r.id }));
    expect(marked.status).toBe(200);
    const [row] = await database.db.select().from(readings).where(eq(readings.id, r.id));
    expect(row.status).toBe('control');
    const again = await markControlRoute(request(`/api/readings/${r.id}/control`, { cookie: tech, body: {} }), params({ readingId: r.id }));
    expect(again.status).toBe(409);
  });

  it('a target cannot be established from fewer than 20 runs (409 saying how many there are)', async () => {
    const response = await establishRoute(request(`/api/quality/materials/${materialId}/establish`, { cookie: tech, body: {} }), params({ materialId }));
    expect(response.status).toBe(409);
    expect((await body(response)).error.message).toMatch(/4 runs so far/);
  });
});

describe('kit counting', () => {
  it('patient, QC and aborted runs each use one test of the lot', async () => {
    const patient = await patientByRecord(database.db, clinicId, 'FH-1002');
    const vetRow = (await database.db.query.staffUsers.findFirst({ where: (u, { eq: is }) => is(u.email, 'vet@fernhollow.example') }))!;
    const started = await startOrderRoute(
      request('/api/orders', { cookie: tech, body: { patientId: patient.id, analyte: 'cCRP', instrumentId, sampleType: 'serum', orderedBy: vetRow.id } }),
      undefined,
    );
    expect(started.status).toBe(201);
    const order = (await body(started)).order;
    expect(order.kitLotId).toBe(lotId);
    const aborted = await abortRoute(request(`/api/orders/${order.id}/abort`, { cookie: tech, body: { reason: 'cartridge not re-inserted in time' } }), params({ orderId: order.id }));
    expect(aborted.status).toBe(200);
    const lots = (await body(await kitLotsRoute(request('/api/quality/kit-lots', { cookie: tech }), undefined))).kitLots;
    const lot = lots.find((l: { id: string }) => l.id === lotId);
    // QC: 51, 70, 49, 52 (by hand) = 4; patient: 12, 14, 15 = 3 (the one marked by hand counts as QC); aborted: 1.
    expect(lot.usage).toEqual({ patient: 3, qc: 4, aborted: 1 });
    expect(lot.stock).toMatchObject({ total: 20, used: 8, remaining: 12, low: false });
  });

  it('a reading on a lot past its expiry date is marked on arrival', async () => {
    const expired = await kitLotRoute(
      request('/api/quality/kit-lots', { cookie: tech, body: { analyte: 'cCRP', lotNumber: 'L-OLD', expiresOn: '2020-01-31', testsPerKit: 20, openedOn: '2099-01-01', instrumentId } }),
      undefined,
    );
    expect(expired.status).toBe(201);
    const r = await send({ value: 16 });
    expect(r.qualityMarks).toEqual(['kit-expired']);
  });
});

describe('room temperature', () => {
  it('a result on a day with no log entry is marked when the instrument has a range; an entry in range clears it', async () => {
    const set = await operatingRangeRoute(
      request(`/api/quality/instruments/${instrumentId}/operating-range`, { method: 'PUT', cookie: admin, body: { minC: 18, maxC: 25 } }),
      params({ instrumentId }),
    );
    expect(set.status).toBe(200);
    // The demo seed logged today's temperature: take it away to start from a day without an entry.
    const day = localDay(new Date(), 'Europe/London');
    await database.db.delete(roomTemperatureLogs).where(and(eq(roomTemperatureLogs.clinicId, clinicId), eq(roomTemperatureLogs.day, day)));
    const r = await send({ value: 17 });
    const patient = await patientByRecord(database.db, clinicId, 'FH-1003');
    const assigned = await assignRoute(request(`/api/readings/${r.id}/assign`, { cookie: tech, body: { patientId: patient.id } }), params({ readingId: r.id }));
    expect(assigned.status).toBe(200);
    const chart = async () =>
      (await body(await chartRoute(request(`/api/patients/${patient.id}/results`, { cookie: vet }), params({ patientId: patient.id })))).results.find(
        (x: { id: string }) => x.id === r.id,
      );
    // The Review list shows the chart's marks word for word (one server helper), so a result is not signed off blind.
    const review = async () =>
      (await body(await unreviewedRoute(request('/api/reviews/unreviewed?mine=0', { cookie: vet }), undefined))).results.find((x: { id: string }) => x.id === r.id);
    const before = await chart();
    expect(before.quality.map((m: { code: string }) => m.code)).toEqual(['kit-expired', 'room-temperature']);
    expect((await review()).quality).toEqual(before.quality);
    const hot = await temperatureRoute(request('/api/quality/temperatures', { cookie: tech, body: { day, temperatureC: 27.5 } }), undefined);
    expect(hot.status).toBe(201);
    expect((await chart()).quality.find((m: { code: string }) => m.code === 'room-temperature').detail).toMatch(/above the instrument's 25 °C/);
    expect((await review()).quality).toEqual((await chart()).quality);
    await temperatureRoute(request('/api/quality/temperatures', { cookie: tech, body: { day, temperatureC: 21 } }), undefined);
    expect((await chart()).quality.map((m: { code: string }) => m.code)).toEqual(['kit-expired']);
    expect((await review()).quality.map((m: { label: string }) => m.label)).toEqual(['Expired kit lot']);
  });
});

describe('reference-interval verification', () => {
  it('records 20 values with the decision, and refuses 19', async () => {
    const [interval] = await database.db.select().from(referenceIntervals).where(eq(referenceIntervals.clinicId, clinicId));
    const low = interval.low ?? 0;
    const high = interval.high ?? low + 10;
    const inside = Array.from({ length: 18 }, (_, i) => low + ((high - low) * (i + 1)) / 20);
    const ok = await verificationRoute(request('/api/quality/verifications', { cookie: tech, body: { intervalId: interval.id, values: [...inside, high + 1, high + 2] } }), undefined);
    expect(ok.status).toBe(201);
    const saved = (await body(ok)).verification;
    expect(saved.decision).toBe('accepted');
    expect(saved.result.first.outside).toBe(2);
    const three = await verificationRoute(request('/api/quality/verifications', { cookie: tech, body: { intervalId: interval.id, values: [...inside.slice(1), high + 1, high + 2, high + 3] } }), undefined);
    expect((await body(three)).verification.decision).toBe('test-second-set');
    const short = await verificationRoute(request('/api/quality/verifications', { cookie: tech, body: { intervalId: interval.id, values: inside.slice(1) } }), undefined);
    expect(short.status).toBe(400);
  });
});

describe('instrument and bridge health', () => {
  it('shows the heartbeat’s port state and link-error counts, open captures, the last reading, the loaded lot and QC', async () => {
    const beat = await heartbeatRoute(
      request('/api/bridge/heartbeat', {
        token,
        body: { spoolDepth: 0, sources: [{ instrument: CODE, state: 'open', bytesReceived: 900, lastByteAt: new Date().toISOString(), checksumRetransmissions: 2, framingErrors: 1 }] },
      }),
      undefined,
    );
    expect(beat.status).toBeLessThan(300);
    await ingest(token, [{ key: 'labq-unparsed-0001', instrument: CODE, receivedAt: new Date().toISOString(), payload: { kind: 'unparsed', raw: '%%garbled%%', reason: 'no RESULT line' } }]);
    const health = await body(await healthRoute(request('/api/quality/health', { cookie: tech }), undefined));
    const row = health.instruments.find((i: { code: string }) => i.code === CODE);
    expect(row).toMatchObject({ port: 'open', checksumRetransmissions: 2, framingErrors: 1, openCaptures: 1 });
    expect(row.lastReadingAt).not.toBeNull();
    expect(row.kitLots.map((l: { lotNumber: string }) => l.lotNumber)).toEqual(expect.arrayContaining(['L-TEST-1', 'L-OLD']));
    expect(row.qc).toEqual([{ analyte: 'cCRP', status: 'accepted' }]);
    expect(health.bridges.every((b: { offline: boolean }) => b.offline === false)).toBe(true);
  });
});

describe('the demo clinic’s lab-quality records (seed)', () => {
  it('has QC for every analyte the demo analyzers send, one rejected CRP run (1-3s) followed by an accepted rerun, and every test accepted now', async () => {
    const qc = await body(await qcRoute(request('/api/quality/qc', { cookie: tech }), undefined));
    const demo = qc.status.filter((s: { instrumentId: string }) => s.instrumentId !== instrumentId);
    const analytes = demo.map((s: { analyte: string }) => s.analyte).sort();
    expect(analytes).toEqual(['ALB', 'ALP', 'ALT', 'BUN', 'CREA', 'GLU', 'HCT', 'HGB', 'PLT', 'RBC', 'TP', 'WBC', 'cCRP'].sort());
    for (const s of demo) expect([s.analyte, s.status]).toEqual([s.analyte, 'accepted']);
    const crp = demo.find((s: { analyte: string }) => s.analyte === 'cCRP');
    const rejected = crp.rejections.filter((r: { status: string }) => r.status === 'rejected');
    expect(rejected).toHaveLength(1);
    expect(rejected[0].violations.map((v: { rule: string }) => v.rule)).toEqual(['1-3s']);
    const others = demo.filter((s: { analyte: string }) => s.analyte !== 'cCRP').flatMap((s: { rejections: { status: string }[] }) => s.rejections.filter((r) => r.status === 'rejected'));
    expect(others).toEqual([]);
    // Sigma for every control of every analyte, each with its TEa source.
    for (const s of qc.sigma) {
      expect(s.teaSource).toBeTruthy();
      for (const m of s.perMaterial) expect(m.sigma).toBeGreaterThan(0);
    }
  });

  it('has kit lots loaded for every analyte with tests counted, and a verified CRP interval', async () => {
    const lots = (await body(await kitLotsRoute(request('/api/quality/kit-lots', { cookie: tech }), undefined))).kitLots;
    const demoLots = lots.filter((l: { instrumentId: string | null }) => l.instrumentId && l.instrumentId !== instrumentId);
    expect(demoLots).toHaveLength(13);
    const crp = demoLots.find((l: { analyte: string }) => l.analyte === 'cCRP');
    // 5 days × 2 levels + the rerun = 11 QC runs on the current CRP lot of 20 tests; it expires within 30 days.
    expect(crp.usage.qc).toBe(11);
    expect(crp.stock.nearExpiry).toBe(true);
    const { GET } = await import('@/app/api/quality/verifications/route');
    const list = (await body(await GET(request('/api/quality/verifications', { cookie: tech }), undefined))).verifications;
    const seeded = list.find((v: { note: string | null }) => v.note?.includes('demo data'));
    expect(seeded).toMatchObject({ analyte: 'cCRP', decision: 'accepted' });
    expect(seeded.result.first).toMatchObject({ n: 20, outside: 1 });
  });
});
