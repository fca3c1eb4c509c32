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
  /** A result is one of: a number (value, comparator, unit), a code, or text. */
  value: number | null;
  comparator: '<' | '>' | null;
  unit: string | null;
  valueCode: { system: string | null; code: string; display: string | null } | null;
  valueText: string | null;
  /** Comments the instrument sent with the result (HL7 NTE, ASTM C). */
  notes: string[];
  /** A coded or text result's interpretation: true abnormal, false normal, null nothing says. */
  qualitativeAbnormal: boolean | null;
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

// HL7 v2 table 0396 names for the code systems an analyzer may name in CE/CWE component 3, as FHIR system
// URIs (from memory: the FHIR R4 terminology page lists http://loinc.org and http://snomed.info/sct).
const V2_CODING_SYSTEMS: Record<string, string> = { LN: 'http://loinc.org', SCT: 'http://snomed.info/sct', UCUM: UCUM };

/**
 * Coding.system is a URI. A name the analyzer gave that is neither a URI nor a known table 0396 name is kept,
 * under our own URN, rather than dropped: the receiver can still tell two systems' codes apart.
 */
function codingSystem(name: string | null): string | null {
  if (!name) return null;
  if (/^(https?:\/\/|urn:)\S+$/i.test(name)) return name;
  return V2_CODING_SYSTEMS[name.toUpperCase()] ?? `urn:benchwire:coding-system:${encodeURIComponent(name)}`;
}

/**
 * Observation.value[x] (R4 observation.html): valueQuantity for a number, valueCodeableConcept for a coded
 * result (Coding system/code/display, with the text as sent), valueString for a text result; with none of
 * them, no value[x] but dataAbsentReason (invariant obs-6: dataAbsentReason only when value[x] is absent).
 */
export function observationValue(r: Pick<FhirObservationRow, 'value' | 'comparator' | 'unit' | 'valueCode' | 'valueText'>): Json {
  if (r.value !== null) return { valueQuantity: quantity(r.value, r.unit, r.comparator) };
  if (r.valueCode) {
    const system = codingSystem(r.valueCode.system);
    const coding = { ...(system ? { system } : {}), code: r.valueCode.code, ...(r.valueCode.display ? { display: r.valueCode.display } : {}) };
    return { valueCodeableConcept: { coding: [coding], text: r.valueCode.display || r.valueCode.code } };
  }
  if (r.valueText !== null) return { valueString: r.valueText };
  return { dataAbsentReason: { coding: [{ system: 'http://terminology.hl7.org/CodeSystem/data-absent-reason', code: 'unknown' }] } };
}

/** Benchwire flag codes are the v3 ObservationInterpretation codes L, H, LL, HH, N. */
const INTERPRETATION_DISPLAY: Record<string, string> = { L: 'Low', H: 'High', LL: 'Critical low', HH: 'Critical high', N: 'Normal', A: 'Abnormal' };

export function observationResource(r: FhirObservationRow): Json {
  // A coded or text result has no interval: its interpretation is abnormal (A) or normal (N), when known.
  const flag = r.flag?.replace('?', '') ?? (r.qualitativeAbnormal === null ? null : r.qualitativeAbnormal ? 'A' : 'N');
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
    // Observation.note is Annotation, whose text (markdown) is required.
    ...(r.notes.length ? { note: r.notes.map((text) => ({ text })) } : {}),
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
