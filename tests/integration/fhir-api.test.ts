import { Fhir } from 'fhir';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord } from './support';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as integrations from '@/app/api/admin/integrations/route';
import * as revoke from '@/app/api/admin/integrations/[integrationId]/revoke/route';
import * as diagnosticReports from '@/app/fhir/DiagnosticReport/route';
import * as metadata from '@/app/fhir/metadata/route';
import * as observationRead from '@/app/fhir/Observation/[id]/route';
import * as observations from '@/app/fhir/Observation/route';
import * as patientRead from '@/app/fhir/Patient/[id]/route';
import * as patientsSearch from '@/app/fhir/Patient/route';
import * as reportsRoute from '@/app/api/patients/[patientId]/reports/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import * as results from '@/app/api/patients/[patientId]/results/route';
import type { Database } from '@/db/client';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

// The FHIR R4 read API. Every resource returned is validated with the `fhir` npm package (FHIR.js), which
// validates against the R4 (4.0.x) StructureDefinitions it ships. Demo data: the seeded clinic.

let database: Database;
let clinicId: string;
let admin: string;
let vet: string;
let token: string;
let integrationId: string;
let biscuit: string;
let bridgeToken: string;
const fhir = new Fhir();

/** FHIR.js validation: no error-level messages against the R4 definitions. */
function expectValidR4(resource: Record<string, unknown>) {
  const result = fhir.validate(resource, { errorOnUnexpected: true });
  const errors = (result.messages ?? []).filter((m) => m.severity === 'error');
  expect(errors, JSON.stringify(errors, null, 1)).toEqual([]);
  expect(result.valid).toBe(true);
}

beforeAll(async () => {
  ({ database, clinicId, bridgeToken } = await seededDatabase());
  void database;
  admin = await signIn('admin@fernhollow.example');
  vet = await signIn('vet@fernhollow.example');
  biscuit = (await patientByRecord(database.db, clinicId, 'FH-1001')).id;
  const issued = await integrations.POST(request('/api/admin/integrations', { cookie: admin, body: { name: 'Practice system' } }), undefined);
  expect(issued.status).toBe(201);
  ({ token, id: integrationId } = (await body(issued)).integration);
});

const fhirGet = async (route: { GET: (r: Request, c: never) => Promise<Response> }, path: string, ctx?: unknown, auth: string | null = token) => {
  const response = await route.GET(request(path, auth ? { token: auth } : {}), ctx as never);
  return { status: response.status, type: response.headers.get('content-type'), json: await response.json(), headers: response.headers };
};

describe('FHIR R4 read API', () => {
  it('the validator does reject what R4 forbids (so the checks below can fail)', () => {
    // R4 Observation.status is 1..1 and Patient.gender is bound (required) to administrative-gender.
    expect(fhir.validate({ resourceType: 'Observation', code: { text: 'x' } }).valid).toBe(false);
    expect(fhir.validate({ resourceType: 'Patient', gender: 'male_neutered' }).valid).toBe(false);
  });

  it('GET /fhir/metadata answers a valid CapabilityStatement without a token', async () => {
    const r = await fhirGet(metadata, '/fhir/metadata', undefined, null);
    expect(r.status).toBe(200);
    expect(r.type).toContain('application/fhir+json');
    expect(r.json).toMatchObject({ resourceType: 'CapabilityStatement', fhirVersion: '4.0.1', kind: 'instance' });
    expectValidR4(r.json);
  });

  it('everything else needs a valid, unrevoked token (401 with a Bearer challenge, as an OperationOutcome)', async () => {
    const none = await fhirGet(patientsSearch, '/fhir/Patient', undefined, null);
    expect(none.status).toBe(401);
    expect(none.headers.get('www-authenticate')).toContain('Bearer');
    expect(none.json.resourceType).toBe('OperationOutcome');
    expectValidR4(none.json);
    expect((await fhirGet(patientsSearch, '/fhir/Patient', undefined, 'bwf_not-a-real-token')).status).toBe(401);
  });

  it('Patient: read, with the patient-animal extension (species, breed, gender status) and the owner as contact', async () => {
    const r = await fhirGet(patientRead, `/fhir/Patient/${biscuit}`, params({ id: biscuit }));
    expect(r.status).toBe(200);
    expectValidR4(r.json);
    expect(r.json).toMatchObject({ resourceType: 'Patient', id: biscuit, gender: 'male', birthDate: '2018-04-12', name: [{ text: 'Biscuit' }] });
    const animal = r.json.extension.find((e: { url: string }) => e.url === 'http://hl7.org/fhir/StructureDefinition/patient-animal');
    expect(animal.extension).toEqual(
      expect.arrayContaining([
        { url: 'species', valueCodeableConcept: { text: 'Dog' } },
        { url: 'breed', valueCodeableConcept: { text: 'Labrador Retriever' } },
        { url: 'genderStatus', valueCodeableConcept: { coding: [{ system: 'http://hl7.org/fhir/animal-genderstatus', code: 'neutered' }] } },
      ]),
    );
    expect(r.json.contact[0].relationship[0].text).toBe('Owner');
    expect((await fhirGet(patientRead, '/fhir/Patient/x', params({ id: '00000000-0000-4000-8000-000000000000' }))).status).toBe(404);
  });

  it('Patient search by identifier, and paging with _count/_offset and next links', async () => {
    const byId = await fhirGet(patientsSearch, '/fhir/Patient?identifier=urn:benchwire:record-number|FH-1001');
    expectValidR4(byId.json);
    expect(byId.json).toMatchObject({ resourceType: 'Bundle', type: 'searchset', total: 1 });
    const page1 = await fhirGet(patientsSearch, '/fhir/Patient?_count=4');
    expectValidR4(page1.json);
    expect(page1.json.entry).toHaveLength(4);
    const next = page1.json.link.find((l: { relation: string }) => l.relation === 'next').url as string;
    expect(next).toContain('_offset=4');
    const page2 = await fhirGet(patientsSearch, new URL(next).pathname + new URL(next).search);
    const ids1 = page1.json.entry.map((e: { resource: { id: string } }) => e.resource.id);
    const ids2 = page2.json.entry.map((e: { resource: { id: string } }) => e.resource.id);
    expect(ids1.filter((id: string) => ids2.includes(id))).toEqual([]);
    expect((await fhirGet(patientsSearch, '/fhir/Patient?_count=0')).status).toBe(400);
  });

  it('Observation search by patient and date: value with UCUM unit and comparator, reference range, interpretation, status, issued, performer', async () => {
    const all = await fhirGet(observations, `/fhir/Observation?patient=Patient/${biscuit}`);
    expectValidR4(all.json);
    expect(all.json.total).toBe(5);
    for (const entry of all.json.entry) expectValidR4(entry.resource);
    const high = all.json.entry.map((e: { resource: Record<string, never> }) => e.resource).find((o: { valueQuantity: { value: number } }) => o.valueQuantity.value === 96.4);
    expect(high).toMatchObject({
      status: 'final',
      subject: { reference: `Patient/${biscuit}` },
      valueQuantity: { value: 96.4, unit: 'mg/L', system: 'http://unitsofmeasure.org', code: 'mg/L' },
      interpretation: [{ coding: [{ system: 'http://terminology.hl7.org/CodeSystem/v3-ObservationInterpretation', code: 'H' }] }],
      referenceRange: [{ high: { value: 10, unit: 'mg/L', system: 'http://unitsofmeasure.org', code: 'mg/L' } }],
      performer: [{ display: 'Fernhollow Animal Clinic' }],
    });
    expect(typeof high.issued).toBe('string');
    const below = all.json.entry.map((e: { resource: Record<string, never> }) => e.resource).find((o: { valueQuantity: { comparator?: string } }) => o.valueQuantity.comparator === '<');
    expect(below.valueQuantity).toMatchObject({ value: 5, comparator: '<' });

    const latest = new Date(all.json.entry[0].resource.effectiveDateTime);
    const sinceDay = latest.toISOString().slice(0, 10);
    const recent = await fhirGet(observations, `/fhir/Observation?patient=${biscuit}&date=ge${sinceDay}`);
    expect(recent.json.total).toBeGreaterThanOrEqual(1);
    expect(recent.json.total).toBeLessThan(5);
    const read = await fhirGet(observationRead, `/fhir/Observation/${high.id}`, params({ id: high.id }));
    expectValidR4(read.json);
    expect((await fhirGet(observations, '/fhir/Observation?date=yesterday')).status).toBe(400);
  });

  it('DiagnosticReport groups a sent report’s observations', async () => {
    const chart = await body(await results.GET(request('/api/patients/x/results', { cookie: vet }), params({ patientId: biscuit })));
    const latest = chart.results[0];
    await reviews.POST(request('/api/readings/x/reviews', { cookie: vet, body: { reviewed: true } }), params({ readingId: latest.id }));
    const visitDate = new Intl.DateTimeFormat('en-CA', { timeZone: 'Europe/London' }).format(new Date(latest.measuredAt));
    const sent = await reportsRoute.POST(request('/api/patients/x/reports', { cookie: vet, body: { visitDate, recipientKind: 'referring-vet', recipientEmail: 'referrals@example.org' } }), params({ patientId: biscuit }));
    expect(sent.status).toBe(201);
    const r = await fhirGet(diagnosticReports, `/fhir/DiagnosticReport?patient=${biscuit}`);
    expectValidR4(r.json);
    expect(r.json.total).toBe(1);
    const report = r.json.entry[0].resource;
    expectValidR4(report);
    expect(report).toMatchObject({ resourceType: 'DiagnosticReport', status: 'final', subject: { reference: `Patient/${biscuit}` }, effectiveDateTime: visitDate, result: [{ reference: `Observation/${latest.id}` }] });
  });

  it('Observation for coded and text results: valueCodeableConcept and valueString, the interpretation, the notes', async () => {
    // FHIR R4 Observation (observation.html): value[x] is one of valueQuantity | valueCodeableConcept |
    // valueString | …; a CodeableConcept holds coding[] (Coding.system, .code, .display) and text;
    // Observation.note is Annotation (text required); interpretation codes from v3 ObservationInterpretation
    // (A = Abnormal, N = Normal). HL7 v2 CWE component 3 "LN" names LOINC (table 0396, from memory).
    const tech = await signIn('tech@fernhollow.example');
    const juniper = (await patientByRecord(database.db, clinicId, 'FH-1002')).id;
    const onJuniper = async (key: string, payload: Record<string, unknown>) => {
      const readingId = await ingestOne(bridgeToken, key, payload);
      expect((await assign.POST(request('/api/readings/x/assign', { cookie: tech, body: { patientId: juniper } }), params({ readingId }))).status).toBe(200);
      return readingId;
    };
    const coded = await onJuniper('fhir-coded-1', { analyte: 'FELV', value: null, unit: null, code: { system: 'L', code: '1', display: 'Positive' }, flags: ['A'], notes: ['Confirm with a second test'], raw: 'OBX|1|CE|FELV||1^Positive^L||||A\r' });
    const loinc = await onJuniper('fhir-coded-2', { analyte: 'HWAG', value: null, unit: null, code: { system: 'LN', code: 'LA6577-6', display: 'Negative' }, flags: ['N'], raw: 'OBX|1|CE|HWAG||LA6577-6^Negative^LN||||N\r' });
    const word = await onJuniper('fhir-coded-3', { analyte: 'HWAG', value: null, unit: null, code: { system: null, code: 'POS', display: null }, raw: 'R|1|^^^HWAG|POS\r' });
    const text = await onJuniper('fhir-text-1', { analyte: 'UMIC', value: null, unit: null, text: 'Struvite crystals, moderate', raw: 'OBX|1|ST|UMIC||Struvite crystals, moderate\r' });
    const all = await fhirGet(observations, `/fhir/Observation?patient=${juniper}`);
    expectValidR4(all.json);
    const byId = new Map<string, Record<string, unknown>>(all.json.entry.map((e: { resource: { id: string } }) => [e.resource.id, e.resource]));
    for (const id of [coded, loinc, word, text]) expectValidR4(byId.get(id)!);

    const felv = byId.get(coded)!;
    // An analyzer-local system name is kept under our URN, the code and display as sent.
    expect(felv.valueCodeableConcept).toEqual({ coding: [{ system: 'urn:benchwire:coding-system:L', code: '1', display: 'Positive' }], text: 'Positive' });
    expect(felv).not.toHaveProperty('valueQuantity');
    expect(felv).not.toHaveProperty('dataAbsentReason');
    expect(felv.interpretation).toEqual([{ coding: [{ system: 'http://terminology.hl7.org/CodeSystem/v3-ObservationInterpretation', code: 'A', display: 'Abnormal' }] }]);
    expect(felv.note).toEqual([{ text: 'Confirm with a second test' }]);

    expect(byId.get(loinc)!.valueCodeableConcept).toEqual({ coding: [{ system: 'http://loinc.org', code: 'LA6577-6', display: 'Negative' }], text: 'Negative' });
    expect(byId.get(loinc)!.interpretation).toEqual([{ coding: [{ system: 'http://terminology.hl7.org/CodeSystem/v3-ObservationInterpretation', code: 'N', display: 'Normal' }] }]);
    // An ASTM word has no system: the Coding carries the code alone; with no flag and no clinic rule there is no interpretation.
    expect(byId.get(word)!.valueCodeableConcept).toEqual({ coding: [{ code: 'POS' }], text: 'POS' });
    expect(byId.get(word)).not.toHaveProperty('interpretation');

    const micro = byId.get(text)!;
    expect(micro.valueString).toBe('Struvite crystals, moderate');
    expect(micro).not.toHaveProperty('valueCodeableConcept');
    expect(micro).not.toHaveProperty('referenceRange');
    expect(micro).not.toHaveProperty('note');
  });

  it('a revoked token is refused', async () => {
    const revoked = await revoke.POST(request('/api/admin/integrations/x/revoke', { cookie: admin, body: {} }), params({ integrationId }));
    expect(revoked.status).toBe(200);
    expect((await fhirGet(patientsSearch, '/fhir/Patient')).status).toBe(401);
    const list = await body(await integrations.GET(request('/api/admin/integrations', { cookie: admin }), undefined));
    expect(list.integrations[0]).not.toHaveProperty('tokenHash');
    expect((await integrations.GET(request('/api/admin/integrations', { cookie: vet }), undefined)).status).toBe(403);
  });
});
