// Benchwire records as FHIR R4 (4.0.1) resources. Pure functions: lib/fhir/api.ts loads the rows.
// Field meanings from the R4 specification: Patient (patient-animal extension), Observation,
// DiagnosticReport, Bundle (searchset), CapabilityStatement, OperationOutcome.

export const FHIR_VERSION = '4.0.1';
const UCUM = 'http://unitsofmeasure.org';
const INTERPRETATION = 'http://terminology.hl7.org/CodeSystem/v3-ObservationInterpretation';
export const RECORD_NUMBER_SYSTEM = 'urn:benchwire:record-number';
export const ANALYTE_SYSTEM = 'urn:benchwire:analyte';

type Json = Record<string, unknown>;

export interface FhirPatientRow {
  id: string;
  recordNumber: string;
  name: string;
  species: string;
  breed: string | null;
  sex: string;
  dateOfBirth: string | null;
  active: boolean;
  ownerName: string | null;
  ownerPhone: string | null;
  ownerEmail: string | null;
}

const SPECIES_TEXT: Record<string, string> = { dog: 'Dog', cat: 'Cat', rabbit: 'Rabbit', ferret: 'Ferret', bird: 'Bird', reptile: 'Reptile', other: 'Other' };

/** R4 Patient.gender is administrative-gender (male | female | other | unknown); neutering goes in the animal extension. */
export function patientResource(p: FhirPatientRow): Json {
  const gender = p.sex.startsWith('male') ? 'male' : p.sex.startsWith('female') ? 'female' : 'unknown';
  const neutered = p.sex === 'male_neutered' || p.sex === 'female_spayed';
  const animal: Json[] = [{ url: 'species', valueCodeableConcept: { text: SPECIES_TEXT[p.species] ?? p.species } }];
  if (p.breed) animal.push({ url: 'breed', valueCodeableConcept: { text: p.breed } });
  if (p.sex !== 'unknown') {
    // R4 value set animal-genderstatus: neutered | intact | unknown.
    animal.push({ url: 'genderStatus', valueCodeableConcept: { coding: [{ system: 'http://hl7.org/fhir/animal-genderstatus', code: neutered ? 'neutered' : 'intact' }] } });
  }
  const telecom = [
    ...(p.ownerPhone ? [{ system: 'phone', value: p.ownerPhone }] : []),
    ...(p.ownerEmail ? [{ system: 'email', value: p.ownerEmail }] : []),
  ];
  return {
    resourceType: 'Patient',
    id: p.id,
    extension: [{ url: 'http://hl7.org/fhir/StructureDefinition/patient-animal', extension: animal }],
    identifier: [{ use: 'usual', system: RECORD_NUMBER_SYSTEM, value: p.recordNumber }],
    active: p.active,
    name: [{ text: p.name }],
    gender,
    ...(p.dateOfBirth ? { birthDate: p.dateOfBirth } : {}),
    ...(p.ownerName
      ? { contact: [{ relationship: [{ text: 'Owner' }], name: { text: p.ownerName }, ...(telecom.length ? { telecom } : {}) }] }
      : {}),
  };
}

export interface FhirObservationRow {
  id: string;
  patientId: string;
  analyte: string;
  analyteName: string | null;
  /** Numeric results; coded or text results add their own branch in observationValue. */
  value: number | null;
  comparator: '<' | '>' | null;
  unit: string | null;
  resultStatus: 'final' | 'preliminary' | 'corrected' | null;
  measuredAt: Date | null;
  receivedAt: Date;
  storedAt: Date;
  flag: string | null;
  interval: { low: number | null; high: number | null; unit: string } | null;
  performer: string;
}

function quantity(value: number, unit: string | null, comparator?: '<' | '>' | null): Json {
  return { value, ...(comparator ? { comparator } : {}), ...(unit ? { unit, system: UCUM, code: unit } : {}) };
}

/** Observation.value[x]: valueQuantity for a number; no value[x] (with dataAbsentReason) when there is none. */
export function observationValue(r: Pick<FhirObservationRow, 'value' | 'comparator' | 'unit'>): Json {
  if (r.value !== null) return { valueQuantity: quantity(r.value, r.unit, r.comparator) };
  return { dataAbsentReason: { coding: [{ system: 'http://terminology.hl7.org/CodeSystem/data-absent-reason', code: 'unknown' }] } };
}

/** Benchwire flag codes are the v3 ObservationInterpretation codes L, H, LL, HH, N. */
const INTERPRETATION_DISPLAY: Record<string, string> = { L: 'Low', H: 'High', LL: 'Critical low', HH: 'Critical high', N: 'Normal' };

export function observationResource(r: FhirObservationRow): Json {
  const flag = r.flag?.replace('?', '') ?? null;
  const range: Json = {};
  if (r.interval?.low !== null && r.interval?.low !== undefined) range.low = quantity(r.interval.low, r.interval.unit);
  if (r.interval?.high !== null && r.interval?.high !== undefined) range.high = quantity(r.interval.high, r.interval.unit);
  return {
    resourceType: 'Observation',
    id: r.id,
    status: r.resultStatus === 'preliminary' ? 'preliminary' : r.resultStatus === 'corrected' ? 'corrected' : 'final',
    category: [{ coding: [{ system: 'http://terminology.hl7.org/CodeSystem/observation-category', code: 'laboratory', display: 'Laboratory' }] }],
    code: { coding: [{ system: ANALYTE_SYSTEM, code: r.analyte, ...(r.analyteName ? { display: r.analyteName } : {}) }], text: r.analyteName ?? r.analyte },
    subject: { reference: `Patient/${r.patientId}` },
    effectiveDateTime: (r.measuredAt ?? r.receivedAt).toISOString(),
    issued: r.storedAt.toISOString(),
    performer: [{ display: r.performer }],
    ...observationValue(r),
    ...(flag && INTERPRETATION_DISPLAY[flag] ? { interpretation: [{ coding: [{ system: INTERPRETATION, code: flag, display: INTERPRETATION_DISPLAY[flag] }] }] } : {}),
    ...(Object.keys(range).length ? { referenceRange: [range] } : {}),
  };
}

export interface FhirReportRow {
  id: string;
  patientId: string;
  visitDate: string;
  readingIds: string[];
  createdAt: Date;
  sentByName: string;
  performer: string;
}

export function diagnosticReportResource(r: FhirReportRow): Json {
  return {
    resourceType: 'DiagnosticReport',
    id: r.id,
    status: 'final',
    category: [{ coding: [{ system: 'http://terminology.hl7.org/CodeSystem/v2-0074', code: 'LAB', display: 'Laboratory' }] }],
    code: { text: 'Laboratory results' },
    subject: { reference: `Patient/${r.patientId}` },
    effectiveDateTime: r.visitDate,
    issued: r.createdAt.toISOString(),
    performer: [{ display: r.performer }],
    resultsInterpreter: [{ display: r.sentByName }],
    result: r.readingIds.map((id) => ({ reference: `Observation/${id}` })),
  };
}

export function searchBundle(options: { baseUrl: string; type: string; resources: Json[]; total: number; offset: number; count: number; query: URLSearchParams }): Json {
  const link = (offset: number) => {
    const q = new URLSearchParams(options.query);
    q.set('_offset', String(offset));
    q.set('_count', String(options.count));
    return `${options.baseUrl}/${options.type}?${q.toString()}`;
  };
  const links = [{ relation: 'self', url: link(options.offset) }];
  if (options.offset + options.count < options.total) links.push({ relation: 'next', url: link(options.offset + options.count) });
  if (options.offset > 0) links.push({ relation: 'previous', url: link(Math.max(0, options.offset - options.count)) });
  return {
    resourceType: 'Bundle',
    type: 'searchset',
    total: options.total,
    link: links,
    entry: options.resources.map((resource) => ({ fullUrl: `${options.baseUrl}/${resource.resourceType}/${resource.id}`, resource, search: { mode: 'match' } })),
  };
}

export function operationOutcome(severity: 'error' | 'fatal', code: string, text: string): Json {
  return { resourceType: 'OperationOutcome', issue: [{ severity, code, diagnostics: text }] };
}

export function capabilityStatement(baseUrl: string, version: string, date: string): Json {
  const search = (names: [string, string][]) => names.map(([name, type]) => ({ name, type }));
  return {
    resourceType: 'CapabilityStatement',
    status: 'active',
    date,
    kind: 'instance',
    software: { name: 'Benchwire', version },
    implementation: { description: 'Benchwire results (read only)', url: baseUrl },
    fhirVersion: FHIR_VERSION,
    format: ['application/fhir+json', 'json'],
    rest: [
      {
        mode: 'server',
        security: { description: 'Bearer token per integration (Authorization: Bearer …), issued and revoked by a clinic administrator.' },
        resource: [
          { type: 'Patient', interaction: [{ code: 'read' }, { code: 'search-type' }], searchParam: search([['_id', 'token'], ['identifier', 'token']]) },
          { type: 'Observation', interaction: [{ code: 'read' }, { code: 'search-type' }], searchParam: search([['patient', 'reference'], ['date', 'date']]) },
          { type: 'DiagnosticReport', interaction: [{ code: 'read' }, { code: 'search-type' }], searchParam: search([['patient', 'reference'], ['date', 'date']]) },
        ],
      },
    ],
  };
}
