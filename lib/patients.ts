import 'server-only';
import { and, asc, count, eq, ilike, inArray, or, sql } from 'drizzle-orm';
import { db, type Tx } from '@/db/client';
import { alias } from 'drizzle-orm/pg-core';
import { labOrders, owners, patients, readings, resultAlerts, resultAssignments, staffUsers, type Patient } from '@/db/schema';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { recordAudit } from '@/lib/audit';
import { ApiError, notFound } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { isUniqueViolation } from '@/lib/staff';
import {
  dateOfBirthFromAge,
  type MergePatientsInput,
  type PatientInput,
  type PatientStatusInput,
} from '@/lib/validation/patients';

const patientColumns = {
  id: patients.id,
  recordNumber: patients.recordNumber,
  name: patients.name,
  species: patients.species,
  breed: patients.breed,
  sex: patients.sex,
  dateOfBirth: patients.dateOfBirth,
  dateOfBirthEstimated: patients.dateOfBirthEstimated,
  weightKg: patients.weightKg,
  weightMeasuredOn: patients.weightMeasuredOn,
  active: patients.active,
  status: patients.status,
  deceasedOn: patients.deceasedOn,
  ownerId: patients.ownerId,
  ownerName: owners.name,
  ownerPhone: owners.phone,
  attendingVetId: patients.attendingVetId,
  attendingVetName: staffUsers.displayName,
};

export type PatientView = Awaited<ReturnType<typeof searchPatients>>[number];

/** Escapes LIKE wildcards so a typed % or _ matches itself. */
const likeTerm = (q: string) => `%${q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;

export interface PatientFilter {
  species?: Patient['species'];
  /** 'open' (default): active records only; 'all': every record, merged ones included. */
  status?: 'open' | 'all' | Patient['status'];
}

/** Finds patients by name, record number or owner name; an exact record number ranks first. */
export async function searchPatients(actor: Actor, q: string, limit = 50, filter: PatientFilter = {}) {
  const database = await db();
  const term = likeTerm(q);
  // Each arm can use its trigram index (migration 0008); an OR across the joined owners table could not.
  const matches = q
    ? inArray(
        patients.id,
        sql`(select ${patients.id} from ${patients} where ${patients.clinicId} = ${actor.clinicId} and (${ilike(patients.name, term)} or ${ilike(patients.recordNumber, term)})
             union select ${patients.id} from ${patients} join ${owners} on ${owners.id} = ${patients.ownerId} where ${owners.clinicId} = ${actor.clinicId} and (${ilike(owners.name, term)} or ${ilike(owners.phone, term)}))`,
      )
    : undefined;
  const status = filter.status ?? 'open';
  return database
    .select(patientColumns)
    .from(patients)
    .leftJoin(owners, eq(owners.id, patients.ownerId))
    .leftJoin(staffUsers, eq(staffUsers.id, patients.attendingVetId))
    .where(
      and(
        eq(patients.clinicId, actor.clinicId),
        status === 'open' ? eq(patients.active, true) : status === 'all' ? undefined : eq(patients.status, status),
        filter.species ? eq(patients.species, filter.species) : undefined,
        matches,
      ),
    )
    .orderBy(
      sql`case when lower(${patients.recordNumber}) = lower(${q}) then 0 else 1 end`,
      asc(sql`lower(${patients.name})`),
      asc(patients.recordNumber),
    )
    .limit(limit);
}

export async function getPatient(actor: Actor, patientId: string) {
  const database = await db();
  const mergedInto = alias(patients, 'merged_into');
  const [patient] = await database
    .select({
      ...patientColumns,
      ownerEmail: owners.email,
      mergedIntoId: patients.mergedIntoId,
      mergedIntoRecordNumber: mergedInto.recordNumber,
      mergedIntoName: mergedInto.name,
      updatedAt: patients.updatedAt,
    })
    .from(patients)
    .leftJoin(owners, eq(owners.id, patients.ownerId))
    .leftJoin(staffUsers, eq(staffUsers.id, patients.attendingVetId))
    .leftJoin(mergedInto, eq(mergedInto.id, patients.mergedIntoId))
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  const [{ n }] = patient.ownerId
    ? await database.select({ n: count() }).from(patients).where(eq(patients.ownerId, patient.ownerId))
    : [{ n: 0 }];
  return { ...patient, ownerPatientCount: n };
}
export type PatientDetail = Awaited<ReturnType<typeof getPatient>>;

/** Owners on file whose name, phone or e-mail contains the term (to give a new pet an existing owner). */
export async function searchOwners(actor: Actor, q: string) {
  const database = await db();
  const term = likeTerm(q);
  return database
    .select({ id: owners.id, name: owners.name, phone: owners.phone, email: owners.email, patientCount: count(patients.id) })
    .from(owners)
    .leftJoin(patients, eq(patients.ownerId, owners.id))
    .where(and(eq(owners.clinicId, actor.clinicId), or(ilike(owners.name, term), ilike(owners.phone, term), ilike(owners.email, term))))
    .groupBy(owners.id)
    .orderBy(asc(sql`lower(${owners.name})`))
    .limit(20);
}

/** The clinic's active veterinarians, for the "attending veterinarian" choice. */
export async function listVeterinarians(actor: Actor) {
  const database = await db();
  return database
    .select({ id: staffUsers.id, displayName: staffUsers.displayName })
    .from(staffUsers)
    .where(and(eq(staffUsers.clinicId, actor.clinicId), eq(staffUsers.role, 'veterinarian'), eq(staffUsers.active, true)))
    .orderBy(asc(staffUsers.displayName));
}

const fieldError = (path: string, message: string, status = 400) =>
  new ApiError(status, status === 409 ? 'conflict' : 'invalid_request', `${message}`, [{ path, message }]);

const recordNumberTaken = (recordNumber: string) =>
  new ApiError(409, 'record_number_taken', `Record number ${recordNumber} is already used by another patient of this clinic.`, [
    { path: 'recordNumber', message: 'Already used by another patient of this clinic.' },
  ]);

/** The patient's columns from a validated form: date of birth from an estimated age, weight dated today by default. */
function patientValues(input: PatientInput) {
  const estimated = !input.dateOfBirth && (input.ageYears !== undefined || input.ageMonths !== undefined);
  return {
    recordNumber: input.recordNumber,
    name: input.name,
    species: input.species,
    breed: input.breed ?? null,
    sex: input.sex,
    dateOfBirth: estimated ? dateOfBirthFromAge(input.ageYears ?? 0, input.ageMonths ?? 0) : (input.dateOfBirth ?? null),
    dateOfBirthEstimated: estimated,
    weightKg: input.weightKg ?? null,
    weightMeasuredOn: input.weightKg === undefined ? null : (input.weightMeasuredOn ?? new Date().toISOString().slice(0, 10)),
  };
}

async function checkAttendingVet(tx: Tx, clinicId: string, vetId: string | undefined) {
  if (!vetId) return null;
  const [vet] = await tx
    .select({ id: staffUsers.id })
    .from(staffUsers)
    .where(and(eq(staffUsers.id, vetId), eq(staffUsers.clinicId, clinicId), eq(staffUsers.role, 'veterinarian'), eq(staffUsers.active, true)));
  if (!vet) throw fieldError('attendingVetId', 'Choose one of the clinic’s active veterinarians.');
  return vet.id;
}

/**
 * The owner a saved form names: one on file (ownerId), the patient's current owner with updated contact
 * details, or a new owner. Audited in the caller's transaction.
 */
async function resolveOwner(tx: Tx, actor: Actor, input: PatientInput, currentOwnerId: string | null) {
  if (input.ownerId) {
    const [owner] = await tx
      .select({ id: owners.id })
      .from(owners)
      .where(and(eq(owners.id, input.ownerId), eq(owners.clinicId, actor.clinicId)));
    if (!owner) throw fieldError('ownerId', 'Choose an owner of this clinic.');
    return owner.id;
  }
  if (!input.ownerName) return null;
  const contact = { name: input.ownerName, phone: input.ownerPhone ?? null, email: input.ownerEmail ?? null };
  const audit = { clinicId: actor.clinicId, actorUserId: actor.userId, entityType: 'owner' };
  if (currentOwnerId) {
    const [before] = await tx.select().from(owners).where(eq(owners.id, currentOwnerId)).for('update');
    const changes = diff({ name: before.name, phone: before.phone, email: before.email }, contact);
    if (Object.keys(changes).length) {
      await tx.update(owners).set(contact).where(eq(owners.id, currentOwnerId));
      await recordAudit(tx, { ...audit, action: 'owner.updated', entityId: currentOwnerId, details: { changes } });
    }
    return currentOwnerId;
  }
  const [owner] = await tx.insert(owners).values({ clinicId: actor.clinicId, ...contact }).returning({ id: owners.id });
  await recordAudit(tx, { ...audit, action: 'owner.created', entityId: owner.id, details: { name: contact.name } });
  return owner.id;
}

/** Field → [before, after] for the fields that changed. */
function diff(before: Record<string, unknown>, after: Record<string, unknown>) {
  const changes: Record<string, [unknown, unknown]> = {};
  for (const [key, value] of Object.entries(after)) {
    if ((before[key] ?? null) !== (value ?? null)) changes[key] = [before[key] ?? null, value ?? null];
  }
  return changes;
}

/** Registers a patient (and a new owner, if given) in one transaction; a taken record number is a 409 naming the field. */
export async function createPatient(actor: Actor, input: PatientInput) {
  requirePermission(actor, 'managePatients');
  const database = await db();
  try {
    return await database.transaction(async (tx) => {
      const attendingVetId = await checkAttendingVet(tx, actor.clinicId, input.attendingVetId);
      const ownerId = await resolveOwner(tx, actor, input, null);
      const values = patientValues(input);
      const [patient] = await tx
        .insert(patients)
        .values({ clinicId: actor.clinicId, ...values, ownerId, attendingVetId })
        .returning();
      await recordAudit(tx, {
        clinicId: actor.clinicId,
        actorUserId: actor.userId,
        action: 'patient.registered',
        entityType: 'patient',
        entityId: patient.id,
        details: { patientId: patient.id, ...values, ownerId, attendingVetId },
      });
      await publish(tx, { type: 'patient.updated', clinicId: actor.clinicId, id: patient.id, patientId: patient.id });
      return patient;
    });
  } catch (error) {
    if (isUniqueViolation(error)) throw recordNumberTaken(input.recordNumber);
    throw error;
  }
}

async function lockPatient(tx: Tx, actor: Actor, patientId: string) {
  const [patient] = await tx
    .select()
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)))
    .for('update');
  if (!patient) throw notFound('The patient');
  return patient;
}

const mergedRecord = (p: Patient) =>
  new ApiError(409, 'patient_merged', 'This record was merged into another; change the record it was merged into.', [], {
    mergedIntoId: p.mergedIntoId,
  });

/** Saves an edited patient record; the audit event lists each changed field with its old and new value. */
export async function updatePatient(actor: Actor, patientId: string, input: PatientInput) {
  requirePermission(actor, 'managePatients');
  const database = await db();
  try {
    return await database.transaction(async (tx) => {
      const before = await lockPatient(tx, actor, patientId);
      if (before.status === 'merged') throw mergedRecord(before);
      const attendingVetId = await checkAttendingVet(tx, actor.clinicId, input.attendingVetId);
      const ownerId = await resolveOwner(tx, actor, input, before.ownerId);
      const values = { ...patientValues(input), ownerId, attendingVetId };
      // An unchanged estimated age re-entered later must not shift the birth date by the time that passed.
      if (values.dateOfBirthEstimated && before.dateOfBirthEstimated && before.dateOfBirth && sameAge(before.dateOfBirth, values.dateOfBirth!)) {
        values.dateOfBirth = before.dateOfBirth;
      }
      const changes = diff(before, values);
      if (!Object.keys(changes).length) return before;
      const [patient] = await tx
        .update(patients)
        .set({ ...values, updatedAt: new Date() })
        .where(eq(patients.id, patientId))
        .returning();
      await recordAudit(tx, {
        clinicId: actor.clinicId,
        actorUserId: actor.userId,
        action: 'patient.updated',
        entityType: 'patient',
        entityId: patientId,
        details: { patientId, changes },
      });
      await publish(tx, { type: 'patient.updated', clinicId: actor.clinicId, id: patientId, patientId });
      return patient;
    });
  } catch (error) {
    if (isUniqueViolation(error)) throw recordNumberTaken(input.recordNumber);
    throw error;
  }
}

/** Two dates of birth give the same age in whole months today. */
function sameAge(a: string, b: string) {
  const months = (iso: string) => {
    const [y, m] = iso.split('-').map(Number);
    return y * 12 + m;
  };
  return months(a) === months(b);
}

/** Marks a record deceased or archived (closed to new results and tests), or reopens it, with a reason. */
export async function setPatientStatus(actor: Actor, patientId: string, input: PatientStatusInput) {
  requirePermission(actor, 'managePatients');
  const database = await db();
  return database.transaction(async (tx) => {
    const before = await lockPatient(tx, actor, patientId);
    if (before.status === 'merged') throw mergedRecord(before);
    if (before.status === input.status && (input.status !== 'deceased' || before.deceasedOn === (input.deceasedOn ?? null))) {
      throw new ApiError(409, 'unchanged', `The record is already ${input.status}.`);
    }
    const deceasedOn = input.status === 'deceased' ? (input.deceasedOn ?? new Date().toISOString().slice(0, 10)) : null;
    const [patient] = await tx
      .update(patients)
      .set({ status: input.status, active: input.status === 'active', deceasedOn, updatedAt: new Date() })
      .where(eq(patients.id, patientId))
      .returning();
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'patient.status_changed',
      entityType: 'patient',
      entityId: patientId,
      details: { patientId, from: before.status, to: input.status, reason: input.reason, ...(deceasedOn ? { deceasedOn } : {}) },
    });
    await publish(tx, { type: 'patient.updated', clinicId: actor.clinicId, id: patientId, patientId });
    return patient;
  });
}

/**
 * Merges a duplicate record of the same animal into the kept one, in one transaction: every result
 * (current and taken-off), its assignments with their reviews, the orders and the alerts move to the
 * kept record; each moved reading gets its own audit event, the duplicate is closed as merged and points
 * at the kept record. Nothing is deleted; the audit events written before stay as they were.
 */
export async function mergePatients(actor: Actor, keepId: string, input: MergePatientsInput) {
  requirePermission(actor, 'managePatients');
  if (keepId === input.duplicatePatientId) throw fieldError('duplicatePatientId', 'Choose a different record to merge into this one.');
  const database = await db();
  return database.transaction(async (tx) => {
    // Lock both in a fixed order, so two merges of the same pair cannot deadlock.
    const locked = await tx
      .select()
      .from(patients)
      .where(and(eq(patients.clinicId, actor.clinicId), inArray(patients.id, [keepId, input.duplicatePatientId])))
      .orderBy(asc(patients.id))
      .for('update');
    const keep = locked.find((p) => p.id === keepId);
    const duplicate = locked.find((p) => p.id === input.duplicatePatientId);
    if (!keep) throw notFound('The patient');
    if (!duplicate) throw fieldError('duplicatePatientId', 'That record was not found in this clinic.', 404);
    if (keep.status === 'merged') throw mergedRecord(keep);
    if (duplicate.status === 'merged') {
      throw fieldError('duplicatePatientId', `${duplicate.recordNumber} was already merged into another record.`, 409);
    }
    if (keep.species !== duplicate.species) {
      throw fieldError('duplicatePatientId', `${duplicate.recordNumber} is a ${duplicate.species} and ${keep.recordNumber} a ${keep.species}: not one animal. Correct the species first if it was entered wrongly.`, 409);
    }

    const from = duplicate.id;
    const moved = await tx
      .update(readings)
      .set({ patientId: keep.id })
      .where(and(eq(readings.clinicId, actor.clinicId), eq(readings.patientId, from)))
      .returning({ id: readings.id });
    const assignments = await tx
      .update(resultAssignments)
      .set({ patientId: keep.id })
      .where(and(eq(resultAssignments.clinicId, actor.clinicId), eq(resultAssignments.patientId, from)))
      .returning({ id: resultAssignments.id, readingId: resultAssignments.readingId, endedAt: resultAssignments.endedAt });
    const orders = await tx
      .update(labOrders)
      .set({ patientId: keep.id })
      .where(and(eq(labOrders.clinicId, actor.clinicId), eq(labOrders.patientId, from)))
      .returning({ id: labOrders.id });
    const alerts = await tx
      .update(resultAlerts)
      .set({ patientId: keep.id })
      .where(and(eq(resultAlerts.clinicId, actor.clinicId), eq(resultAlerts.patientId, from)))
      .returning({ id: resultAlerts.id });
    await tx
      .update(patients)
      .set({ status: 'merged', active: false, mergedIntoId: keep.id, updatedAt: new Date() })
      .where(eq(patients.id, from));

    const audit = { clinicId: actor.clinicId, actorUserId: actor.userId };
    const summary = {
      keptPatientId: keep.id,
      keptRecordNumber: keep.recordNumber,
      mergedPatientId: from,
      mergedRecordNumber: duplicate.recordNumber,
      reason: input.reason,
      readingIds: [...new Set(assignments.map((a) => a.readingId))],
      currentReadingIds: moved.map((r) => r.id),
      assignmentIds: assignments.map((a) => a.id),
      orderIds: orders.map((o) => o.id),
      alertIds: alerts.map((a) => a.id),
    };
    await recordAudit(tx, { ...audit, action: 'patient.merged', entityType: 'patient', entityId: keep.id, details: { patientId: keep.id, ...summary } });
    await recordAudit(tx, { ...audit, action: 'patient.merged_into', entityType: 'patient', entityId: from, details: { patientId: from, ...summary } });
    for (const readingId of summary.readingIds) {
      await recordAudit(tx, {
        ...audit,
        action: 'reading.merged',
        entityType: 'reading',
        entityId: readingId,
        details: { patientId: keep.id, fromPatientId: from, recordNumber: keep.recordNumber, fromRecordNumber: duplicate.recordNumber, reason: input.reason },
      });
    }
    await publish(tx, { type: 'patient.updated', clinicId: actor.clinicId, id: from, patientId: from });
    await publish(tx, { type: 'patient.updated', clinicId: actor.clinicId, id: keep.id, patientId: keep.id });
    return { patientId: keep.id, mergedPatientId: from, readings: summary.readingIds.length, orders: orders.length, alerts: alerts.length };
  });
}
