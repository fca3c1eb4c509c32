import 'server-only';
import { and, asc, eq, ilike, inArray, sql } from 'drizzle-orm';
import { db } from '@/db/client';
import { owners, patients, staffUsers } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';

const patientColumns = {
  id: patients.id,
  recordNumber: patients.recordNumber,
  name: patients.name,
  species: patients.species,
  breed: patients.breed,
  sex: patients.sex,
  dateOfBirth: patients.dateOfBirth,
  weightKg: patients.weightKg,
  active: patients.active,
  ownerName: owners.name,
  ownerPhone: owners.phone,
  attendingVetName: staffUsers.displayName,
};

export type PatientView = Awaited<ReturnType<typeof searchPatients>>[number];

/** Escapes LIKE wildcards so a typed % or _ matches itself. */
const likeTerm = (q: string) => `%${q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;

/** Finds patients by name, record number or owner name; an exact record number ranks first. */
export async function searchPatients(actor: Actor, q: string, limit = 50) {
  const database = await db();
  const term = likeTerm(q);
  // Each arm can use its trigram index (migration 0008); an OR across the joined owners table could not.
  const matches = q
    ? inArray(
        patients.id,
        sql`(select ${patients.id} from ${patients} where ${patients.clinicId} = ${actor.clinicId} and (${ilike(patients.name, term)} or ${ilike(patients.recordNumber, term)})
             union select ${patients.id} from ${patients} join ${owners} on ${owners.id} = ${patients.ownerId} where ${owners.clinicId} = ${actor.clinicId} and ${ilike(owners.name, term)})`,
      )
    : undefined;
  return database
    .select(patientColumns)
    .from(patients)
    .leftJoin(owners, eq(owners.id, patients.ownerId))
    .leftJoin(staffUsers, eq(staffUsers.id, patients.attendingVetId))
    .where(and(eq(patients.clinicId, actor.clinicId), eq(patients.active, true), matches))
    .orderBy(
      sql`case when lower(${patients.recordNumber}) = lower(${q}) then 0 else 1 end`,
      asc(sql`lower(${patients.name})`),
      asc(patients.recordNumber),
    )
    .limit(limit);
}

export async function getPatient(actor: Actor, patientId: string) {
  const database = await db();
  const [patient] = await database
    .select({ ...patientColumns, ownerEmail: owners.email })
    .from(patients)
    .leftJoin(owners, eq(owners.id, patients.ownerId))
    .leftJoin(staffUsers, eq(staffUsers.id, patients.attendingVetId))
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  return patient;
}
