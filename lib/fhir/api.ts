import 'server-only';
import { and, asc, count, desc, eq, gte, inArray, isNull, lt, sql, type SQL } from 'drizzle-orm';
import { NextResponse } from 'next/server';
import { ZodError } from 'zod';
import { db } from '@/db/client';
import { analyteSettings, clinics, integrationTokens, owners, patients, readings, resultAssignments, resultReports, staffUsers, type IntegrationToken } from '@/db/schema';
import { bearerToken, hashBridgeToken } from '@/lib/auth/tokens';
import { analyteContexts, intervalContexts } from '@/lib/clinical/config';
import { evaluateResult } from '@/lib/clinical/evaluate';
import { FLAG_CODE } from '@/lib/clinical/flags';
import { APP_VERSION } from '@/lib/config';
import { ApiError } from '@/lib/http';
import { capabilityStatement, diagnosticReportResource, observationResource, operationOutcome, patientResource, searchBundle } from './resources';
import { resultValueColumns } from '@/lib/readings/queries';

// The FHIR read API: token check, search parameters, paging, and answers as FHIR JSON.

const FHIR_JSON = 'application/fhir+json; charset=utf-8';

export const fhirJson = (body: unknown, status = 200, headers: Record<string, string> = {}) =>
  new NextResponse(JSON.stringify(body), { status, headers: { 'content-type': FHIR_JSON, ...headers } });

/** Like apiRoute, but failures answer as an OperationOutcome (FHIR R4 http.html). */
export function fhirRoute<Ctx = unknown>(handler: (request: Request, context: Ctx) => Promise<Response>) {
  return async (request: Request, context: Ctx): Promise<Response> => {
    try {
      return await handler(request, context);
    } catch (error) {
      if (error instanceof ApiError) {
        const code = error.status === 401 ? 'login' : error.status === 404 ? 'not-found' : 'invalid';
        return fhirJson(operationOutcome('error', code, error.message), error.status, error.headers);
      }
      if (error instanceof ZodError) return fhirJson(operationOutcome('error', 'invalid', error.issues[0]?.message ?? 'Invalid request.'), 400);
      console.error('[benchwire] unhandled error in FHIR handler', error);
      return fhirJson(operationOutcome('fatal', 'exception', 'Something went wrong on the server. It has been logged.'), 500);
    }
  };
}

export function baseUrl(request: Request): string {
  const configured = process.env.APP_URL?.trim().replace(/\/+$/, '');
  return `${configured ?? new URL(request.url).origin}/fhir`;
}

export async function metadata(request: Request) {
  return capabilityStatement(baseUrl(request), APP_VERSION, new Date().toISOString());
}

/** The integration whose bearer token came with the request; revoked tokens are refused. */
export async function requireIntegration(request: Request): Promise<IntegrationToken> {
  const token = bearerToken(request);
  const challenge = 'Bearer realm="benchwire-fhir"';
  if (!token) throw new ApiError(401, 'unauthenticated', 'An integration token is required (Authorization: Bearer …).', [], {}, { 'www-authenticate': challenge });
  const database = await db();
  const [row] = await database
    .select()
    .from(integrationTokens)
    .where(and(eq(integrationTokens.tokenHash, hashBridgeToken(token)), isNull(integrationTokens.revokedAt)));
  if (!row) throw new ApiError(401, 'invalid_token', 'This integration token is unknown or has been revoked.', [], {}, { 'www-authenticate': `${challenge}, error="invalid_token"` });
  await database.update(integrationTokens).set({ lastUsedAt: new Date() }).where(eq(integrationTokens.id, row.id));
  return row;
}

const ID = /^[A-Za-z0-9\-.]{1,64}$/;
const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** A resource id from the path; only our UUIDs exist, anything else is simply not found. */
export function resourceId(raw: string): string | null {
  if (!ID.test(raw)) throw new ApiError(400, 'invalid_id', 'Not a valid FHIR id.');
  return UUID.test(raw) ? raw.toLowerCase() : null;
}

function paging(query: URLSearchParams) {
  const countParam = query.get('_count');
  const offsetParam = query.get('_offset');
  const n = countParam === null ? 50 : Number(countParam);
  const offset = offsetParam === null ? 0 : Number(offsetParam);
  if (!Number.isInteger(n) || n < 1 || n > 200) throw new ApiError(400, 'invalid_count', '_count must be a whole number from 1 to 200.');
  if (!Number.isInteger(offset) || offset < 0) throw new ApiError(400, 'invalid_offset', '_offset must be a whole number from 0.');
  return { count: n, offset };
}

/** FHIR search `patient=` as "Patient/<id>" or "<id>". */
function patientParam(query: URLSearchParams): string | null | undefined {
  const raw = query.get('patient') ?? query.get('subject');
  if (raw === null) return undefined;
  const id = raw.replace(/^Patient\//, '');
  return UUID.test(id) ? id.toLowerCase() : null;
}

/**
 * FHIR date search (R4 search.html §3.1.1.2): prefixes eq, ge, gt, le, lt on a date (YYYY, YYYY-MM,
 * YYYY-MM-DD) or an instant; a date means the whole period it names.
 */
export function dateConditions(values: string[], column: SQL): SQL[] {
  const out: SQL[] = [];
  for (const raw of values) {
    const match = /^(eq|ge|gt|le|lt)?(\d{4}(?:-\d{2}(?:-\d{2}(?:T[0-9:.]+(?:Z|[+-]\d{2}:\d{2}))?)?)?)$/.exec(raw);
    if (!match) throw new ApiError(400, 'invalid_date', `date=${raw} is not a FHIR date search value (e.g. ge2026-01-01).`);
    const [, prefix = 'eq', value] = match;
    const start = new Date(value.length === 4 ? `${value}-01-01T00:00:00Z` : value.length === 7 ? `${value}-01T00:00:00Z` : value.length === 10 ? `${value}T00:00:00Z` : value);
    if (Number.isNaN(start.getTime())) throw new ApiError(400, 'invalid_date', `date=${raw} is not a real date.`);
    const end = new Date(start);
    if (value.length === 4) end.setUTCFullYear(end.getUTCFullYear() + 1);
    else if (value.length === 7) end.setUTCMonth(end.getUTCMonth() + 1);
    else if (value.length === 10) end.setUTCDate(end.getUTCDate() + 1);
    else end.setTime(end.getTime() + 1);
    if (prefix === 'eq') out.push(and(gte(column, start), lt(column, end))!);
    if (prefix === 'ge') out.push(gte(column, start));
    if (prefix === 'gt') out.push(gte(column, end));
    if (prefix === 'lt') out.push(lt(column, start));
    if (prefix === 'le') out.push(lt(column, end));
  }
  return out;
}

const patientSelect = {
  id: patients.id,
  recordNumber: patients.recordNumber,
  name: patients.name,
  species: patients.species,
  breed: patients.breed,
  sex: patients.sex,
  dateOfBirth: patients.dateOfBirth,
  active: patients.active,
  ownerName: owners.name,
  ownerPhone: owners.phone,
  ownerEmail: owners.email,
};

export async function searchPatients(integration: IntegrationToken, request: Request, idOnly?: string | null) {
  const query = new URL(request.url).searchParams;
  const { count: n, offset } = paging(query);
  const conditions: (SQL | undefined)[] = [eq(patients.clinicId, integration.clinicId)];
  const idParam = idOnly !== undefined ? idOnly : query.get('_id');
  if (idParam !== null && idParam !== undefined) conditions.push(UUID.test(idParam) ? eq(patients.id, idParam.toLowerCase()) : sql`false`);
  const identifier = query.get('identifier');
  if (identifier !== null) {
    const [system, value] = identifier.includes('|') ? identifier.split('|', 2) : [null, identifier];
    if (system && system !== 'urn:benchwire:record-number') conditions.push(sql`false`);
    else conditions.push(eq(patients.recordNumber, value));
  }
  const database = await db();
  const where = and(...conditions);
  const [{ total }] = await database.select({ total: count() }).from(patients).where(where);
  const rows = await database.select(patientSelect).from(patients).leftJoin(owners, eq(owners.id, patients.ownerId)).where(where).orderBy(asc(patients.recordNumber)).limit(n).offset(offset);
  return { resources: rows.map(patientResource), total, count: n, offset, query };
}

async function observationRows(integration: IntegrationToken, where: SQL | undefined, n: number, offset: number) {
  const database = await db();
  const base = and(eq(readings.clinicId, integration.clinicId), eq(readings.status, 'assigned'), where);
  const [{ total }] = await database.select({ total: count() }).from(readings).where(base);
  const rows = await database
    .select({
      id: readings.id,
      patientId: readings.patientId,
      analyte: readings.analyte,
      analyteName: analyteSettings.name,
      ...resultValueColumns,
      resultStatus: readings.resultStatus,
      measuredAt: readings.measuredAt,
      receivedAt: readings.receivedAt,
      storedAt: readings.storedAt,
      instrumentId: readings.instrumentId,
      species: patients.species,
      patientName: patients.name,
      clinicName: clinics.name,
    })
    .from(readings)
    .innerJoin(patients, eq(patients.id, readings.patientId))
    .innerJoin(clinics, eq(clinics.id, readings.clinicId))
    .innerJoin(resultAssignments, and(eq(resultAssignments.readingId, readings.id), isNull(resultAssignments.endedAt)))
    .leftJoin(analyteSettings, and(eq(analyteSettings.clinicId, readings.clinicId), eq(analyteSettings.code, readings.analyte)))
    .where(base)
    .orderBy(desc(sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`), asc(readings.id))
    .limit(n)
    .offset(offset);
  const codes = [...new Set(rows.map((r) => r.analyte))];
  const [analytes, intervals] = await Promise.all([analyteContexts(database, integration.clinicId, codes), intervalContexts(database, integration.clinicId, codes)]);
  const resources = rows.map((r) => {
    const e = evaluateResult(r, { name: r.patientName, species: r.species }, analytes.get(r.analyte), intervals);
    return observationResource({
      ...r,
      patientId: r.patientId!,
      value: e.display.value,
      comparator: e.display.comparator,
      unit: e.display.unit,
      qualitativeAbnormal: e.qualitative?.abnormal ?? null,
      flag: e.flag ? FLAG_CODE[e.flag.flag] + (e.flag.certain ? '' : '?') : null,
      interval: e.interval ? { low: e.interval.low, high: e.interval.high, unit: e.interval.unit } : null,
      performer: r.clinicName,
    });
  });
  return { resources, total };
}

export async function searchObservations(integration: IntegrationToken, request: Request, idOnly?: string | null) {
  const query = new URL(request.url).searchParams;
  const { count: n, offset } = paging(query);
  const conditions: (SQL | undefined)[] = [];
  if (idOnly !== undefined) conditions.push(idOnly ? eq(readings.id, idOnly) : sql`false`);
  const patient = patientParam(query);
  if (patient !== undefined) conditions.push(patient ? eq(readings.patientId, patient) : sql`false`);
  conditions.push(...dateConditions(query.getAll('date'), sql`coalesce(${readings.measuredAt}, ${readings.receivedAt})`));
  const { resources, total } = await observationRows(integration, and(...conditions), n, offset);
  return { resources, total, count: n, offset, query };
}

export async function searchReports(integration: IntegrationToken, request: Request, idOnly?: string | null) {
  const query = new URL(request.url).searchParams;
  const { count: n, offset } = paging(query);
  const conditions: (SQL | undefined)[] = [eq(resultReports.clinicId, integration.clinicId)];
  if (idOnly !== undefined) conditions.push(idOnly ? eq(resultReports.id, idOnly) : sql`false`);
  const patient = patientParam(query);
  if (patient !== undefined) conditions.push(patient ? eq(resultReports.patientId, patient) : sql`false`);
  conditions.push(...dateConditions(query.getAll('date'), sql`${resultReports.visitDate}::timestamptz`));
  const database = await db();
  const where = and(...conditions);
  const [{ total }] = await database.select({ total: count() }).from(resultReports).where(where);
  const rows = await database
    .select({ id: resultReports.id, patientId: resultReports.patientId, visitDate: resultReports.visitDate, readingIds: resultReports.readingIds, createdAt: resultReports.createdAt, sentByName: staffUsers.displayName, performer: clinics.name })
    .from(resultReports)
    .innerJoin(staffUsers, eq(staffUsers.id, resultReports.sentBy))
    .innerJoin(clinics, eq(clinics.id, resultReports.clinicId))
    .where(where)
    .orderBy(desc(resultReports.createdAt))
    .limit(n)
    .offset(offset);
  // Only results still on that patient's record are referenced.
  const ids = [...new Set(rows.flatMap((r) => r.readingIds))];
  const current = ids.length
    ? new Set((await database.select({ id: readings.id }).from(readings).where(and(inArray(readings.id, ids), eq(readings.status, 'assigned')))).map((r) => r.id))
    : new Set<string>();
  const resources = rows.map((r) => diagnosticReportResource({ ...r, readingIds: r.readingIds.filter((id) => current.has(id)) }));
  return { resources, total, count: n, offset, query };
}

/** A search as a Bundle, or one resource for a read (404 as an OperationOutcome when absent). */
export function answer(request: Request, type: string, result: { resources: Record<string, unknown>[]; total: number; count: number; offset: number; query: URLSearchParams }, read = false) {
  if (read) {
    if (!result.resources[0]) throw new ApiError(404, 'not_found', `${type} was not found.`);
    return fhirJson(result.resources[0]);
  }
  return fhirJson(searchBundle({ baseUrl: baseUrl(request), type, ...result }));
}
