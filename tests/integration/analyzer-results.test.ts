// Results as the analyzer meant them, through the bridge route, assignment and the chart: the analyzer's
// range flags a result when the clinic has no interval (labelled so), the analyzer's own flag is always
// shown, a coded result stays a code, and a typed-in result gets the same tests, units and flags.
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, ingestOne, patientByRecord, readingRecord, unparsedRecord } from './support';
import * as results from '@/app/api/patients/[patientId]/results/route';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as unreviewed from '@/app/api/reviews/unreviewed/route';
import { GET as typable } from '@/app/api/captures/analytes/route';
import * as abnormalCodes from '@/app/api/admin/clinical/analytes/[code]/abnormal-codes/route';
import * as clinicalConfig from '@/app/api/admin/clinical/route';
import * as unitsList from '@/app/api/admin/units/route';
import * as unitMapping from '@/app/api/admin/units/[unitId]/route';
import { POST as transcribe } from '@/app/api/captures/[captureId]/transcribe/route';
import type { Database } from '@/db/client';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let clinicId: string;
let tech: string;
let vet: string;
let biscuit: string;
let n = 0;
beforeAll(async () => {
  ({ database, bridgeToken: token, clinicId } = await seededDatabase());
  tech = await signIn('tech@fernhollow.example');
  vet = await signIn('vet@fernhollow.example');
  biscuit = (await patientByRecord(database.db, clinicId, 'FH-1001')).id;
});

const key = () => `analyzer-${String(++n).padStart(8, '0')}`;
const onBiscuit = async (payload: Record<string, unknown>) => {
  const readingId = await ingestOne(token, key(), payload);
  const response = await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: biscuit } }), params({ readingId }));
  expect(response.status).toBe(200);
  return readingId;
};
const chartRow = async (readingId: string) => {
  const chart = await body(await results.GET(request('/api/patients/x/results', { cookie: vet }), params({ patientId: biscuit })));
  return { row: chart.results.find((r: { id: string }) => r.id === readingId), analytes: chart.analytes };
};

describe('units UCUM cannot read', () => {
  // "x10^9/L" is a common printed spelling of 10⁹ per litre (common practice, no source); UCUM writes it
  // 10*9/L (UCUM §§ on "10*" powers of ten, from memory), and ucum-lhc refuses the printed form.
  it('are listed per instrument as printed, and a mapping applies to later readings with the printed text kept', async () => {
    const admin = await signIn('admin@fernhollow.example');
    const fromHaematology = async (value: number) => {
      const response = await ingest(token, [readingRecord(key(), { analyte: 'WBC', value, unit: 'x10^9/L', raw: `WBC ${value} x10^9/L\n` }, 'hema-analyzer')]);
      const readingId = (await body(response)).results[0].id;
      expect((await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: biscuit } }), params({ readingId }))).status).toBe(200);
      return readingId;
    };
    const listed = async () => (await body(await unitsList.GET(request('/api/admin/units', { cookie: admin }), undefined))).units;
    const earlier = await fromHaematology(31.5);
    const [unit] = (await listed()).filter((u: { printed: string }) => u.printed === 'x10^9/L');
    expect(unit).toMatchObject({ instrumentCode: 'hema-analyzer', printed: 'x10^9/L', ucum: null, readingCount: 1 });
    const before = (await chartRow(earlier)).row;
    expect(before.unit).toBe('x10^9/L');
    expect(before.clinical.flag).toBeNull();
    expect(before.clinical.problems.join(' ')).toMatch(/not a UCUM unit/);

    const map = (ucum: string | null, cookie = admin) =>
      unitMapping.PUT(request(`/api/admin/units/${unit.id}`, { method: 'PUT', cookie, body: { ucum } }), params({ unitId: unit.id }));
    const wrong = await map('x10^9/L');
    expect(wrong.status).toBe(400);
    expect((await body(wrong)).error.issues[0].path).toBe('ucum');
    expect((await map('10*9/L', tech)).status).toBe(403);
    expect((await map('10*9/L')).status).toBe(200);

    const later = await fromHaematology(31.5);
    const after = (await chartRow(later)).row;
    expect(after).toMatchObject({ unit: '10*9/L', printedUnit: 'x10^9/L' });
    expect(after.clinical.unitNote).toBe('Printed "x10^9/L", read as 10*9/L (the clinic\'s mapping for this instrument).');
    // Read in UCUM, it meets the clinic's dog interval for WBC (defaults, from memory) and is flagged.
    expect(after.clinical.flag).toMatchObject({ flag: expect.stringMatching(/high/) });
    // The reading that came before the mapping keeps what it arrived with.
    expect((await chartRow(earlier)).row).toMatchObject({ unit: 'x10^9/L', printedUnit: null });
    expect((await listed()).find((u: { id: string }) => u.id === unit.id)).toMatchObject({ ucum: '10*9/L', readingCount: 2, mappedByName: expect.any(String) });
  });
});

describe('analyzer ranges and flags', () => {
  // Potassium has no clinic interval in the defaults: HL7 OBX-7 "3.5-5.8" and OBX-8 "L" (table 0078, from memory) decide.
  it('flags and bands from the analyzer’s range when the clinic has no interval, labelled as the analyzer’s', async () => {
    const id = await onBiscuit({ analyte: 'K', value: 2.9, unit: 'mmol/L', referenceRange: '3.5-5.8', flags: ['L'], raw: 'OBX|1|NM|K||2.9|mmol/L|3.5-5.8|L\r' });
    const { row, analytes } = await chartRow(id);
    expect(row.clinical.flag).toMatchObject({ flag: 'low', certain: true });
    expect(row.clinical.band).toEqual({ label: 'Below interval', certain: true });
    expect(row.clinical.interval).toMatchObject({ origin: 'analyzer', source: 'Interval from the analyzer (3.5-5.8)', low: 3.5, high: 5.8 });
    expect(row.clinical.analyzerFlag).toMatchObject({ codes: ['L'], abnormal: true });
    expect(analytes.K.interval).toMatchObject({ origin: 'analyzer', low: 3.5, high: 5.8 });
    const list = (await body(await unreviewed.GET(request('/api/reviews/unreviewed', { cookie: vet }), undefined))).results;
    expect(list.find((r: { id: string }) => r.id === id)).toMatchObject({ flag: { flag: 'low' }, band: { label: 'Below interval' }, intervalOrigin: 'analyzer', analyzerFlag: { codes: ['L'] } });
  });

  // The issue's example: ALB 10 g/L flagged L with 22–40; the clinic's dog interval (defaults, from memory) now flags it too.
  it('uses the clinic’s interval when there is one, and keeps the analyzer’s flag beside it', async () => {
    const id = await onBiscuit({ analyte: 'ALB', value: 10, unit: 'g/L', referenceRange: '22 to 40', flags: ['L'], raw: 'R|1|^^^ALB|10|g/L|22^40|L\r' });
    const { row } = await chartRow(id);
    expect(row.clinical.flag).toMatchObject({ flag: 'low' });
    expect(row.clinical.interval.origin).toBe('clinic');
    expect(row.clinical.band).toEqual({ label: 'Below interval', certain: true });
    expect(row.clinical.analyzerFlag.codes).toEqual(['L']);
  });

  it('keeps a coded result as a code with its interpretation, and its notes', async () => {
    const id = await onBiscuit({ analyte: 'FELV', value: null, code: { system: 'L', code: '1', display: 'Positive' }, unit: null, flags: ['A'], notes: ['Confirm with a second test'], raw: 'OBX|1|CE|FELV||1^Positive^L||||A\r' });
    const { row, analytes } = await chartRow(id);
    expect(row).toMatchObject({ value: null, valueCode: { code: '1', display: 'Positive', system: 'L' }, notes: ['Confirm with a second test'] });
    expect(row.clinical.qualitative).toMatchObject({ label: 'Positive', abnormal: true });
    expect(row.clinical.flag).toBeNull();
    expect(analytes.FELV.qualitative).toBe(true);
  });

  // The per-test rule (Admin → Results and matching) interprets a coded result the analyzer did not flag;
  // the analyzer's own flag still comes first (issue 9). Heartworm antigen as an ASTM word (E1394 R.4, from memory).
  it('interprets an unflagged coded result by the clinic’s abnormal-codes rule, set through the admin API', async () => {
    const admin = await signIn('admin@fernhollow.example');
    const put = (code: string, payload: unknown, cookie = admin) =>
      abnormalCodes.PUT(request(`/api/admin/clinical/analytes/${code}/abnormal-codes`, { method: 'PUT', cookie, body: payload }), params({ code }));
    const before = await onBiscuit({ analyte: 'HWAG', value: null, code: { system: null, code: 'POS', display: null }, unit: null, raw: 'R|1|^^^HWAG|POS\r' });
    expect((await chartRow(before)).row.clinical.qualitative).toMatchObject({ abnormal: null, basis: expect.stringMatching(/Not interpreted/) });
    // The form's shared schema, on the server too: a code twice, a comma inside a code, a non-admin.
    const twice = await put('HWAG', { abnormalCodes: ['POS', 'pos'] });
    expect(twice.status).toBe(400);
    expect((await body(twice)).error.issues[0].path).toBe('abnormalCodes');
    expect((await body(await put('HWAG', { abnormalCodes: ['POS,WEAK'] }))).error.issues[0].path).toBe('abnormalCodes.0');
    expect((await put('HWAG', { abnormalCodes: ['POS'] }, tech)).status).toBe(403);
    const saved = await put('HWAG', { name: 'Heartworm antigen', abnormalCodes: ['POS', 'WEAK POS'] });
    expect(saved.status).toBe(200);
    expect((await body(saved)).analyte).toMatchObject({ code: 'HWAG', name: 'Heartworm antigen', abnormalCodes: ['POS', 'WEAK POS'] });
    const positive = await onBiscuit({ analyte: 'HWAG', value: null, code: { system: null, code: 'pos', display: null }, unit: null, raw: 'R|1|^^^HWAG|pos\r' });
    expect((await chartRow(positive)).row.clinical.qualitative).toMatchObject({ abnormal: true, basis: 'Clinic rule for HWAG: abnormal when POS, WEAK POS' });
    const negative = await onBiscuit({ analyte: 'HWAG', value: null, code: { system: null, code: 'NEG', display: null }, unit: null, raw: 'R|1|^^^HWAG|NEG\r' });
    expect((await chartRow(negative)).row.clinical.qualitative).toMatchObject({ abnormal: false });
    // The analyzer's flag wins over the rule: NEG flagged A is abnormal.
    const flagged = await onBiscuit({ analyte: 'HWAG', value: null, code: { system: null, code: 'NEG', display: null }, unit: null, flags: ['A'], raw: 'R|1|^^^HWAG|NEG||||A\r' });
    expect((await chartRow(flagged)).row.clinical.qualitative).toMatchObject({ abnormal: true, basis: expect.stringMatching(/Analyzer flag/) });
    // The admin screen lists what was sent so far, to write the rule from.
    const config = await body(await clinicalConfig.GET(request('/api/admin/clinical', { cookie: admin }), undefined));
    expect(config.codedResults).toEqual(expect.arrayContaining([expect.objectContaining({ analyte: 'HWAG', code: 'NEG', count: 2 })]));
  });

  it('refuses a reading that claims two kinds of value, with the field named', async () => {
    const response = await ingest(token, [readingRecord(key(), { value: 1, text: 'positive' })]);
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path).join(' ')).toMatch(/value/);
  });
});

describe('typed-in results', () => {
  async function capture(raw: string) {
    const { results: stored } = await body(await ingest(token, [unparsedRecord(key(), raw, 'record cut short')]));
    return stored[0].id as string;
  }
  const type = (captureId: string, input: Record<string, unknown>) => transcribe(request('/api/captures/x/transcribe', { cookie: tech, body: input }), params({ captureId }));
  const issues = async (response: Response) => (await body(response)).error.issues.map((i: { path: string }) => i.path);

  it('offers the clinic’s tests with their units', async () => {
    const { analytes } = await body(await typable(request('/api/captures/analytes', { cookie: tech }), undefined));
    expect(analytes.find((a: { code: string }) => a.code === 'cCRP')).toEqual({ code: 'cCRP', name: 'C-reactive protein (canine)', units: ['mg/L'] });
  });

  it('requires a test from the list and one of its units, and refuses grouping', async () => {
    const id = await capture('RESULT 12,4 mg/L\n');
    expect(await issues(await type(id, { analyte: 'cCRP', value: '12,4' }))).toContain('unit');
    expect(await issues(await type(id, { analyte: 'crp?', value: '12,4', unit: 'mg/L' }))).toContain('analyte');
    expect(await issues(await type(id, { analyte: 'cCRP', value: '12,4', unit: 'g/L' }))).toContain('unit');
    expect(await issues(await type(id, { analyte: 'cCRP', value: '1,234.5', unit: 'mg/L' }))).toContain('value');
  });

  it('accepts a decimal comma, marks the result typed in and by whom, and flags it like any other', async () => {
    const id = await capture('RESULT 12,4 mg/L\n');
    const response = await type(id, { analyte: 'cCRP', value: '12,4', unit: 'mg/l' });
    expect(response.status).toBe(201);
    const { readingId } = await body(response);
    const assigned = await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: biscuit } }), params({ readingId }));
    expect(assigned.status).toBe(200);
    const { row } = await chartRow(readingId);
    expect(row).toMatchObject({ value: 12.4, unit: 'mg/L', flags: ['transcribed'] });
    expect(row.clinical.typedInBy).toEqual(expect.any(String));
    // 12.4 mg/L is above the canine CRP upper limit of 10 mg/L (defaults, from memory): High, band Raised.
    expect(row.clinical.flag).toMatchObject({ flag: 'high' });
    expect(row.clinical.band).toMatchObject({ label: 'Raised' });
  });
});
