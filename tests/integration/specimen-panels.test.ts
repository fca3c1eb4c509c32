// Specimens and panels: the readings of one sample form one Intake row, and a panel is assigned, moved or
// voided in one action, all or none. Concurrency is checked by firing the competing requests together; the
// outcome must be one whole action or the other, never a panel split between two patients.
// Grouping by instrument + sample ID follows ASTM E1394 §9.4.3 (O-3 specimen ID identifies the sample a
// message's results were measured on) and HL7 v2.5 §7.4.1 (OBR-3 filler order number / specimen); the
// time window is common practice, no source.
import { and, eq, inArray, isNull } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, patientByRecord, readingRecord } from './support';
import { GET as waitingRoute } from '@/app/api/readings/waiting/route';
import { POST as assignReadingRoute } from '@/app/api/readings/[readingId]/assign/route';
import { POST as splitRoute } from '@/app/api/readings/[readingId]/split/route';
import { POST as reassignReadingRoute } from '@/app/api/readings/[readingId]/reassign/route';
import { POST as panelAssignRoute } from '@/app/api/specimens/[specimenId]/assign/route';
import { POST as panelReassignRoute } from '@/app/api/specimens/[specimenId]/reassign/route';
import { POST as panelVoidRoute } from '@/app/api/specimens/[specimenId]/void/route';
import { POST as startOrderRoute } from '@/app/api/orders/route';
import { GET as patientResultsRoute } from '@/app/api/patients/[patientId]/results/route';
import { formatMeasured } from '@/lib/format';
import type { Database } from '@/db/client';
import { auditEvents, labOrders, readings, resultAssignments } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let techCookie: string;
let vetCookie: string;
let moss: { id: string };
let pepper: { id: string };
let otto: { id: string };
let n = 0;

const CHEMISTRY = ['GLU', 'CREA', 'BUN', 'ALT', 'ALP', 'TP', 'ALB'];

beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  moss = await patientByRecord(database.db, clinicId, 'FH-1003');
  pepper = await patientByRecord(database.db, clinicId, 'FH-1004');
  otto = await patientByRecord(database.db, clinicId, 'FH-1005');
  techCookie = await signIn('tech@fernhollow.example');
  vetCookie = await signIn('vet@fernhollow.example');
});

/** One chemistry run: a reading per analyte, each its own spooled record (as the bridge sends them). */
async function chemistryPanel(sampleId: string | null, analytes = CHEMISTRY, extra: Record<string, unknown> = {}) {
  const measuredAt = new Date(Date.now() - 60_000).toISOString();
  const records = analytes.map((analyte, i) =>
    readingRecord(`panel-${String(++n).padStart(8, '0')}`, { analyte, value: 10 + i, unit: 'U/L', sampleId, measuredAt, ...extra }, 'chem-analyzer'),
  );
  const response = await ingest(token, records);
  expect(response.status).toBe(200);
  const ids: string[] = (await body(response)).results.map((r: { id: string }) => r.id);
  const rows = await database.db.select().from(readings).where(inArray(readings.id, ids));
  return { ids, specimenIds: [...new Set(rows.map((r) => r.specimenId!))] };
}

const waiting = async (query = '') => body(await waitingRoute(request(`/api/readings/waiting${query}`, { cookie: techCookie }), undefined));
const panelAssign = (specimenId: string, value: unknown, cookie = techCookie) =>
  panelAssignRoute(request('/api/specimens/x/assign', { cookie, body: value }), params({ specimenId }));
const panelVoid = (specimenId: string, value: unknown, cookie = techCookie) =>
  panelVoidRoute(request('/api/specimens/x/void', { cookie, body: value }), params({ specimenId }));
const panelMove = (specimenId: string, value: unknown, cookie = techCookie) =>
  panelReassignRoute(request('/api/specimens/x/reassign', { cookie, body: value }), params({ specimenId }));
const statuses = async (ids: string[]) => database.db.select().from(readings).where(inArray(readings.id, ids));

describe('grouping readings into specimens', () => {
  it('seven results with one instrument and sample ID form one specimen, listed as one Intake row', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7001');
    expect(specimenIds).toHaveLength(1);
    const list = await waiting();
    const row = list.specimens.find((s: { id: string }) => s.id === specimenIds[0]);
    expect(row.readings.map((r: { id: string }) => r.id).sort()).toEqual([...ids].sort());
    expect(row.sampleId).toBe('C-7001');
  });

  it('the same label sent in a later batch joins the specimen; another label or instrument does not', async () => {
    const first = await chemistryPanel('C-7002', ['GLU']);
    const later = await chemistryPanel('c-7002', ['ALT']); // labels compare without case, as sameId in the matcher
    expect(later.specimenIds).toEqual(first.specimenIds);
    const other = await chemistryPanel('C-7003', ['GLU']);
    expect(other.specimenIds).not.toEqual(first.specimenIds);
  });

  it('without a sample ID, one message (same instrument, patient ID and measured time) is one specimen', async () => {
    const a = await chemistryPanel(null, ['GLU', 'ALT'], { patientRef: 'X-1' });
    expect(a.specimenIds).toHaveLength(1);
    const b = await chemistryPanel(null, ['GLU'], { patientRef: 'X-1', measuredAt: new Date(Date.now() - 5_000).toISOString() });
    expect(b.specimenIds).not.toEqual(a.specimenIds);
  });
});

describe('assigning a panel in one action', () => {
  it('puts every reading on the patient, each with its own assignment and audit event naming the specimen', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7101');
    const response = await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids });
    expect(response.status).toBe(200);
    const rows = await statuses(ids);
    expect(rows.every((r) => r.status === 'assigned' && r.patientId === moss.id)).toBe(true);
    const assignments = await database.db.select().from(resultAssignments).where(inArray(resultAssignments.readingId, ids));
    expect(assignments).toHaveLength(7);
    const events = await database.db
      .select()
      .from(auditEvents)
      .where(and(eq(auditEvents.action, 'reading.assigned'), inArray(auditEvents.entityId, ids)));
    expect(events).toHaveLength(7);
    expect(events.every((e) => e.details.specimenId === specimenIds[0])).toBe(true);
    const list = await waiting();
    expect(list.specimens.map((s: { id: string }) => s.id)).not.toContain(specimenIds[0]);
  });

  it('two panel assignments at once: one patient gets all seven, the other request is 409 and places nothing', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7102');
    const responses = await Promise.all([
      panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids }),
      panelAssign(specimenIds[0], { patientId: pepper.id, readingIds: ids }, vetCookie),
    ]);
    expect(responses.map((r) => r.status).sort()).toEqual([200, 409]);
    const patients = new Set((await statuses(ids)).map((r) => r.patientId));
    expect(patients.size).toBe(1);
    const open = await database.db
      .select()
      .from(resultAssignments)
      .where(and(inArray(resultAssignments.readingId, ids), isNull(resultAssignments.endedAt)));
    expect(open).toHaveLength(7);
  });

  it('a panel assignment racing a single reading’s assignment: whole panel or nothing of it', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7103');
    const [panel, single] = await Promise.all([
      panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids }),
      assignReadingRoute(request('/api/readings/x/assign', { cookie: vetCookie, body: { patientId: pepper.id } }), params({ readingId: ids[3] })),
    ]);
    const rows = await statuses(ids);
    if (panel.status === 200) {
      expect(single.status).toBe(409);
      expect(rows.every((r) => r.patientId === moss.id)).toBe(true);
    } else {
      expect(panel.status).toBe(409);
      expect((await body(panel)).error.code).toBe('panel_changed');
      expect(single.status).toBe(200);
      expect(rows.filter((r) => r.status === 'assigned').map((r) => r.id)).toEqual([ids[3]]);
    }
  });

  it('a panel void racing a panel assignment: one whole action wins', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7104');
    const responses = await Promise.all([
      panelVoid(specimenIds[0], { readingIds: ids, reason: 'control run' }),
      panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids }, vetCookie),
    ]);
    expect(responses.map((r) => r.status).sort()).toEqual([200, 409]);
    const states = new Set((await statuses(ids)).map((r) => r.status));
    expect(states.size).toBe(1);
  });

  it('a result that arrived after the person opened the panel refuses the action (409 panel_changed)', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7105', ['GLU', 'ALT']);
    await chemistryPanel('C-7105', ['ALB']);
    const response = await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids });
    expect(response.status).toBe(409);
    expect((await body(response)).error.code).toBe('panel_changed');
    expect((await statuses(ids)).every((r) => r.status === 'unassigned')).toBe(true);
  });

  it('an order that does not fit rolls the whole panel back; fitting orders are fulfilled by their analyte', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7106', ['GLU', 'ALT']);
    const chem = (await database.db.query.instruments.findFirst({ where: (i, { eq: e }) => e(i.code, 'chem-analyzer') }))!;
    const start = async (patientId: string, analyte: string) => {
      const response = await startOrderRoute(
        request('/api/orders', { cookie: techCookie, body: { patientId, analyte, sampleType: 'serum', instrumentId: chem.id, orderedBy: (await database.db.query.staffUsers.findFirst({ where: (s, { eq: e }) => e(s.role, 'veterinarian') }))!.id, sampleId: 'C-7106' } }),
        undefined,
      );
      expect(response.status).toBe(201);
      return (await body(response)).order.id as string;
    };
    const altForOtto = await start(otto.id, 'ALT');
    const refused = await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids, orderIds: [altForOtto] });
    expect(refused.status).toBe(409);
    expect((await statuses(ids)).every((r) => r.status === 'unassigned')).toBe(true);
    const altForMoss = await start(moss.id, 'ALT');
    const ok = await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids, orderIds: [altForMoss] });
    expect(ok.status).toBe(200);
    const [order] = await database.db.select().from(labOrders).where(eq(labOrders.id, altForMoss));
    const alt = (await statuses(ids)).find((r) => r.analyte === 'ALT')!;
    expect(order).toMatchObject({ status: 'fulfilled', fulfilledReadingId: alt.id });
  });
});

describe('moving and voiding a panel', () => {
  it('moves all results to another patient with the reason; each reading keeps both assignments', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7201');
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids })).status).toBe(200);
    const response = await panelMove(specimenIds[0], { patientId: pepper.id, readingIds: ids, reason: 'tube label misread' });
    expect(response.status).toBe(200);
    expect((await statuses(ids)).every((r) => r.patientId === pepper.id)).toBe(true);
    const history = await database.db.select().from(resultAssignments).where(inArray(resultAssignments.readingId, ids));
    expect(history).toHaveLength(14);
    expect(history.filter((h) => h.patientId === moss.id).every((h) => h.endReason === 'tube label misread')).toBe(true);
  });

  it('two moves at once: the panel ends on one patient, whole', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7202');
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids })).status).toBe(200);
    const responses = await Promise.all([
      panelMove(specimenIds[0], { patientId: pepper.id, readingIds: ids, reason: 'wrong tube' }),
      panelMove(specimenIds[0], { patientId: otto.id, readingIds: ids, reason: 'wrong tube' }, vetCookie),
    ]);
    const statusCodes = responses.map((r) => r.status);
    // Serialised, the second move is legal too (it moves the whole panel again); either way nothing is split.
    expect(statusCodes.every((s) => s === 200 || s === 409)).toBe(true);
    expect(new Set((await statuses(ids)).map((r) => r.patientId)).size).toBe(1);
  });

  it('voids a waiting panel with the reason on every reading', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7203');
    const response = await panelVoid(specimenIds[0], { readingIds: ids, reason: 'spoiled (haemolysed) sample' });
    expect(response.status).toBe(200);
    expect((await statuses(ids)).every((r) => r.status === 'voided')).toBe(true);
    const events = await database.db.select().from(auditEvents).where(and(eq(auditEvents.action, 'reading.voided'), inArray(auditEvents.entityId, ids)));
    expect(events.map((e) => e.details.reason)).toEqual(Array(7).fill('spoiled (haemolysed) sample'));
  });

  it('a reason is required (400 naming the field)', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7204', ['GLU']);
    const response = await panelVoid(specimenIds[0], { readingIds: ids, reason: '' });
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('reason');
  });
});

describe('correcting a panel from the chart', () => {
  it('moves the panel the person saw: 409 patient_changed when it was moved meanwhile, nothing half-moved', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7211', ['GLU', 'ALT', 'ALB']);
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids })).status).toBe(200);
    // Someone else moved it to Pepper; a chart still showing it on Moss asks to move it from Moss.
    expect((await panelMove(specimenIds[0], { patientId: pepper.id, fromPatientId: moss.id, readingIds: ids, reason: 'label misread' })).status).toBe(200);
    const stale = await panelMove(specimenIds[0], { patientId: otto.id, fromPatientId: moss.id, readingIds: ids, reason: 'label misread' });
    expect(stale.status).toBe(409);
    expect((await body(stale)).error.code).toBe('patient_changed');
    expect((await statuses(ids)).every((r) => r.patientId === pepper.id)).toBe(true);
  });

  it('moving one result alone splits it off the panel; the rest then moves as a panel without it', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7212', ['GLU', 'ALT', 'ALB']);
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids })).status).toBe(200);
    const single = await reassignReadingRoute(
      request('/api/readings/x/reassign', { cookie: techCookie, body: { patientId: otto.id, fromPatientId: moss.id, reason: 'ALT was another tube' } }),
      params({ readingId: ids[1] }),
    );
    expect(single.status).toBe(200);
    const moved = (await statuses([ids[1]]))[0];
    expect(moved).toMatchObject({ patientId: otto.id });
    expect(moved.specimenId).not.toBe(specimenIds[0]);
    const split = await database.db.select().from(auditEvents).where(and(eq(auditEvents.action, 'reading.split-off'), eq(auditEvents.entityId, ids[1])));
    expect(split).toHaveLength(1);
    // The panel left on Moss is GLU and ALB; moving it does not take ALT back.
    const rest = [ids[0], ids[2]];
    expect((await panelMove(specimenIds[0], { patientId: pepper.id, fromPatientId: moss.id, readingIds: rest, reason: 'label misread' })).status).toBe(200);
    expect((await statuses(ids)).map((r) => [r.id, r.patientId]).sort()).toEqual([
      [ids[0], pepper.id],
      [ids[1], otto.id],
      [ids[2], pepper.id],
    ].sort());
    // Named as part of the panel, the split-off result is refused, and nothing moves.
    const wrong = await panelMove(specimenIds[0], { patientId: moss.id, readingIds: ids, reason: 'label misread' });
    expect(wrong.status).toBe(409);
    expect((await statuses(rest)).every((r) => r.patientId === pepper.id)).toBe(true);
  });

  it('voids a panel on the record in one action; each result keeps its history', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7213', ['GLU', 'ALT']);
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: ids })).status).toBe(200);
    expect((await panelVoid(specimenIds[0], { readingIds: ids, reason: 'clotted sample', onRecord: true })).status).toBe(200);
    const rows = await statuses(ids);
    expect(rows.every((r) => r.status === 'voided' && r.patientId === null)).toBe(true);
    const ended = await database.db.select().from(resultAssignments).where(inArray(resultAssignments.readingId, ids));
    expect(ended.every((a) => a.endReason === 'clotted sample')).toBe(true);
  });
});

describe('splitting a reading off its panel', () => {
  it('gives the reading its own row; the rest of the panel is then assigned without it', async () => {
    const { ids, specimenIds } = await chemistryPanel('C-7301', ['GLU', 'ALT', 'ALB']);
    const split = await splitRoute(request('/api/readings/x/split', { cookie: techCookie, body: {} }), params({ readingId: ids[2] }));
    expect(split.status).toBe(200);
    const { split: result } = await body(split);
    expect(result.specimenId).not.toBe(specimenIds[0]);
    const rest = ids.slice(0, 2);
    expect((await panelAssign(specimenIds[0], { patientId: moss.id, readingIds: rest })).status).toBe(200);
    const [alone] = await statuses([ids[2]]);
    expect(alone).toMatchObject({ status: 'unassigned', specimenId: result.specimenId });
    const single = await splitRoute(request('/api/readings/x/split', { cookie: techCookie, body: {} }), params({ readingId: ids[2] }));
    expect(single.status).toBe(409);
  });
});

describe('Intake never hides a reading', () => {
  it('counts every waiting reading, pages past 100 specimens and filters by instrument, test and age', async () => {
    const before = await waiting();
    const batch = Array.from({ length: 130 }, (_, i) =>
      readingRecord(`many-${String(i).padStart(8, '0')}`, { analyte: 'cCRP', value: i, sampleId: `S-${9000 + i}` }),
    );
    for (let i = 0; i < batch.length; i += 65) expect((await ingest(token, batch.slice(i, i + 65))).status).toBe(200);
    const all = await waiting('?pageSize=50');
    expect(all.waiting.readings).toBe(before.waiting.readings + 130);
    expect(all.pages).toBeGreaterThanOrEqual(3);
    const seen = new Set<string>();
    for (let page = 1; page <= all.pages; page++) {
      const list = await waiting(`?pageSize=50&page=${page}`);
      for (const s of list.specimens) for (const r of s.readings) seen.add(r.id);
    }
    expect(seen.size).toBe(all.waiting.readings);

    const crp = await waiting('?instrument=crp-reader&pageSize=200');
    expect(crp.specimens.every((s: { instrumentCode: string }) => s.instrumentCode === 'crp-reader')).toBe(true);
    const glu = await waiting('?analyte=GLU&pageSize=200');
    expect(glu.specimens.length).toBeGreaterThan(0);
    expect(glu.specimens.every((s: { readings: { analyte: string }[] }) => s.readings.some((r) => r.analyte === 'GLU'))).toBe(true);
    const old = await waiting('?olderThanMinutes=60');
    expect(old.matching.specimens).toBe(0);
    expect(new Date(all.waiting.oldestAt).getTime()).toBeLessThanOrEqual(Date.now());
  });

  it('a bad page size is a 400 naming the field', async () => {
    const response = await waitingRoute(request('/api/readings/waiting?pageSize=0', { cookie: techCookie }), undefined);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues[0].path).toBe('pageSize');
  });
});

describe('a panel as the analyzer sent it', () => {
  // The order and the digits are the analyzer's: results are listed in the order its records came (ASTM
  // E1394 §10.1.2 R.2 sequence numbers, HL7 v2 OBX-1 set IDs, from memory; the bridge sends them in that
  // order), and each value keeps the decimals it was printed with (common practice, no source).
  const SENT = [
    { analyte: 'TP', value: 71, printed: '71', decimals: 0, unit: 'g/L' },
    { analyte: 'GLU', value: 5, printed: '5.0', decimals: 1, unit: 'mmol/L' },
    { analyte: 'ALB', value: 32, printed: '32', decimals: 0, unit: 'g/L' },
    { analyte: 'ALT', value: 26, printed: '26', decimals: 0, unit: 'U/L' },
    { analyte: 'CREA', value: 88, printed: '88', decimals: 0, unit: 'umol/L' },
    { analyte: 'BUN', value: 6.25, printed: '6.25', decimals: 2, unit: 'mmol/L' },
    { analyte: 'ALP', value: 40, printed: '40', decimals: null, unit: 'U/L' }, // an older bridge: precision unknown
  ];

  it('Intake lists the readings in the order they were sent, on every reload, with the precision each was sent with', async () => {
    const measuredAt = new Date(Date.now() - 60_000).toISOString();
    // One message: the bridge gives its records one arrival time, so only the sent order can order them.
    const receivedAt = new Date().toISOString();
    const records = SENT.map((s, i) => ({
      ...readingRecord(
        `order-${String(++n).padStart(8, '0')}`,
        { analyte: s.analyte, value: s.value, unit: s.unit, sampleId: 'C-7401', measuredAt, raw: `R|${i + 1}|^^^${s.analyte}|${s.printed}|${s.unit}\r`, ...(s.decimals === null ? {} : { decimals: s.decimals }) },
        'chem-analyzer',
      ),
      receivedAt,
    }));
    expect((await ingest(token, records)).status).toBe(200);
    for (let reload = 0; reload < 3; reload++) {
      const row = (await waiting('?pageSize=200')).specimens.find((s: { sampleId: string }) => s.sampleId === 'C-7401');
      expect(row.readings.map((r: { analyte: string }) => r.analyte)).toEqual(SENT.map((s) => s.analyte));
      // Intake's decimals: as sent, else the analyte's setting (ALP: 0 in the clinical defaults, lib/clinical/defaults.ts).
      expect(row.readings.map((r: { decimals: number }) => r.decimals)).toEqual([0, 1, 0, 0, 0, 2, 0]);
      expect(row.readings.map((r: { valueDecimals: number | null }) => r.valueDecimals)).toEqual(SENT.map((s) => s.decimals));
    }
  });

  it('the chart shows "5.0" as 5.0 and "26" as 26 after the panel is assigned', async () => {
    const row = (await waiting('?pageSize=200')).specimens.find((s: { sampleId: string }) => s.sampleId === 'C-7401');
    const ids = row.readings.map((r: { id: string }) => r.id);
    expect((await panelAssign(row.id, { patientId: otto.id, readingIds: ids })).status).toBe(200);
    const chart = await body(await patientResultsRoute(request(`/api/patients/${otto.id}/results`, { cookie: vetCookie }), params({ patientId: otto.id })));
    const shown = (analyte: string) => {
      const r = chart.results.find((x: { id: string; analyte: string }) => ids.includes(x.id) && x.analyte === analyte);
      return formatMeasured(r.clinical.display, chart.analytes[analyte].decimals);
    };
    expect(shown('GLU')).toBe('5.0 mmol/L');
    expect(shown('ALT')).toBe('26 U/L');
    expect(shown('BUN')).toBe('6.25 mmol/L');
    expect(shown('ALP')).toBe('40 U/L');
  });
});
