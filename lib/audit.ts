import 'server-only';
import { and, asc, desc, eq, like, lt, or, sql } from 'drizzle-orm';
import { db, type Executor } from '@/db/client';
import { auditEvents, bridges, clinics, patients, staffUsers } from '@/db/schema';
import { insertJsonRows } from '@/lib/bulk-insert';

export interface AuditEntry {
  clinicId: string;
  actorUserId?: string | null;
  actorBridgeId?: string | null;
  action: string;
  entityType: string;
  entityId: string;
  details?: Record<string, unknown>;
}

/** Appends to the audit trail; call it inside the transaction that makes the change. */
export async function recordAudit(tx: Executor, entry: AuditEntry): Promise<void> {
  await tx.insert(auditEvents).values({ ...entry, details: entry.details ?? {} });
}

export interface AuditFilter {
  patientId?: string;
  actorUserId?: string;
  /** An exact action ("reading.voided"), or a family ending in a dot ("patient."). */
  action?: string;
  /** Calendar days in the clinic's time zone, inclusive. */
  from?: string;
  to?: string;
  /** Paging: events older than this id. */
  before?: number;
  limit: number;
}

/**
 * Reads the clinic's audit trail, newest first, for the admin audit viewer. "By patient" finds the events
 * on the patient's record itself and every event whose details name it (assignments, moves away from it,
 * reviews, merges).
 */
export async function listAuditEvents(clinicId: string, filter: AuditFilter) {
  const database = await db();
  const [clinic] = await database.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, clinicId));
  const tz = clinic?.timeZone ?? 'UTC';
  const p = filter.patientId;
  const conditions = [
    eq(auditEvents.clinicId, clinicId),
    p
      ? or(
          and(eq(auditEvents.entityType, 'patient'), eq(auditEvents.entityId, p)),
          sql`${auditEvents.details} ->> 'patientId' = ${p}`,
          sql`${auditEvents.details} ->> 'fromPatientId' = ${p}`,
        )
      : undefined,
    filter.actorUserId ? eq(auditEvents.actorUserId, filter.actorUserId) : undefined,
    filter.action
      ? filter.action.endsWith('.')
        ? like(auditEvents.action, `${filter.action.replace(/[\\%_]/g, (c) => `\\${c}`)}%`)
        : eq(auditEvents.action, filter.action)
      : undefined,
    filter.from ? sql`${auditEvents.at} >= (${filter.from}::date)::timestamp at time zone ${tz}` : undefined,
    filter.to ? sql`${auditEvents.at} < ((${filter.to}::date + 1))::timestamp at time zone ${tz}` : undefined,
    filter.before ? lt(auditEvents.id, filter.before) : undefined,
  ];
  const rows = await database
    .select({
      id: auditEvents.id,
      at: auditEvents.at,
      action: auditEvents.action,
      entityType: auditEvents.entityType,
      entityId: auditEvents.entityId,
      details: auditEvents.details,
      actorUserId: auditEvents.actorUserId,
      actorName: staffUsers.displayName,
      bridgeName: bridges.name,
      patientId: patients.id,
      patientName: patients.name,
      patientRecordNumber: patients.recordNumber,
    })
    .from(auditEvents)
    .leftJoin(staffUsers, eq(staffUsers.id, auditEvents.actorUserId))
    .leftJoin(bridges, eq(bridges.id, auditEvents.actorBridgeId))
    .leftJoin(
      patients,
      and(
        eq(patients.clinicId, auditEvents.clinicId),
        sql`${patients.id}::text = coalesce(${auditEvents.details} ->> 'patientId', case when ${auditEvents.entityType} = 'patient' then ${auditEvents.entityId} end)`,
      ),
    )
    .where(and(...conditions))
    .orderBy(desc(auditEvents.id))
    .limit(filter.limit + 1);
  const more = rows.length > filter.limit;
  const events = more ? rows.slice(0, filter.limit) : rows;
  return { events, nextBefore: more ? events[events.length - 1].id : null };
}

/** The actions that occur in the clinic's trail, for the viewer's filter. */
export async function auditActions(clinicId: string) {
  const database = await db();
  const rows = await database.selectDistinct({ action: auditEvents.action }).from(auditEvents).where(eq(auditEvents.clinicId, clinicId)).orderBy(asc(auditEvents.action));
  return rows.map((r) => r.action);
}

/** Appends many entries in one multi-row INSERT (a bridge's batch); same rules as recordAudit. */
export async function recordAudits(tx: Executor, entries: AuditEntry[]): Promise<void> {
  if (!entries.length) return;
  // As one JSON parameter: a bridge's batch brings hundreds (lib/bulk-insert.ts).
  await insertJsonRows(
    tx,
    auditEvents,
    entries.map((e) => ({ clinicId: e.clinicId, actorUserId: e.actorUserId ?? null, actorBridgeId: e.actorBridgeId ?? null, action: e.action, entityType: e.entityType, entityId: e.entityId, details: e.details ?? {} })),
  );
}
