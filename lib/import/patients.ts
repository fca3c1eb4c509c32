import 'server-only';
import { and, eq, inArray, sql } from 'drizzle-orm';
import { db, type Executor } from '@/db/client';
import { owners, patients } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { ApiError } from '@/lib/http';
import { publish } from '@/lib/live/bus';
import { checkRows, ImportFileError, IMPORT_FIELDS, parseImportFile, suggestMapping, type ColumnMapping, type DateFormat, type ImportRowValues } from './patients-csv';

// Patients from a practice system's CSV: a preview that writes nothing, then one audited transaction.

export interface ImportRequest {
  bytes: Uint8Array;
  fileName: string;
  mapping?: ColumnMapping;
  /** A record number already in Benchwire: update that patient, or leave it as it is. */
  duplicates: 'update' | 'skip';
  dateFormat: DateFormat;
}

type Action = 'create' | 'update' | 'skip' | 'error';

async function plan(tx: Executor, actor: Actor, input: ImportRequest) {
  let parsed;
  try {
    parsed = parseImportFile(input.bytes);
  } catch (error) {
    if (error instanceof ImportFileError) throw new ApiError(error.code === 'file_too_large' ? 413 : 400, error.code, error.message);
    throw error;
  }
  const mapping = input.mapping ?? suggestMapping(parsed.headers);
  for (const [key, index] of Object.entries(mapping)) {
    if (index !== null && index !== undefined && (index < 0 || index >= parsed.headers.length)) {
      throw new ApiError(400, 'bad_mapping', `The column chosen for ${key} is not in the file.`);
    }
  }
  let checked;
  try {
    checked = checkRows(parsed.rows, mapping, { dateFormat: input.dateFormat });
  } catch (error) {
    if (error instanceof ImportFileError) throw new ApiError(400, error.code, error.message);
    throw error;
  }
  const numbers = checked.flatMap((r) => (r.values ? [r.values.recordNumber] : []));
  const existing = numbers.length
    ? await tx
        .select({ id: patients.id, recordNumber: patients.recordNumber, name: patients.name, ownerId: patients.ownerId })
        .from(patients)
        .where(and(eq(patients.clinicId, actor.clinicId), inArray(patients.recordNumber, numbers)))
    : [];
  const byNumber = new Map(existing.map((p) => [p.recordNumber, p]));
  const rows = checked.map((r) => {
    const found = r.values ? byNumber.get(r.values.recordNumber) : undefined;
    const action: Action = r.errors.length ? 'error' : found ? input.duplicates : 'create';
    return { ...r, action, existing: found ? { id: found.id, name: found.name, ownerId: found.ownerId } : null };
  });
  const count = (a: Action) => rows.filter((r) => r.action === a).length;
  return {
    headers: parsed.headers,
    mapping,
    fields: IMPORT_FIELDS.map(({ key, label, required }) => ({ key, label, required })),
    rows,
    summary: { rows: rows.length, create: count('create'), update: count('update'), skip: count('skip'), error: count('error') },
  };
}

/** What an import would do, row by row. Writes nothing. */
export async function previewPatientImport(actor: Actor, input: ImportRequest) {
  requirePermission(actor, 'manageClinic', 'Only administrators import patients.');
  const database = await db();
  const result = await plan(database, actor, input);
  return { ...result, rows: result.rows.map(({ existing, ...r }) => ({ ...r, existingName: existing?.name ?? null })) };
}

/**
 * Runs the import in one transaction. Refused (422) while any row has an error, unless the admin chose to
 * leave those rows out (`skipInvalid`); then they are named in the audit event.
 */
export async function commitPatientImport(actor: Actor, input: ImportRequest & { skipInvalid: boolean }) {
  requirePermission(actor, 'manageClinic', 'Only administrators import patients.');
  const database = await db();
  return database.transaction(async (tx) => {
    // One import at a time per clinic, so two admins cannot create the same record number twice.
    await tx.execute(sql`select pg_advisory_xact_lock(hashtext(${`patient-import:${actor.clinicId}`}))`);
    const result = await plan(tx, actor, input);
    if (result.summary.error && !input.skipInvalid) {
      throw new ApiError(
        422,
        'rows_have_errors',
        `${result.summary.error} row${result.summary.error === 1 ? ' has' : 's have'} errors; fix the file or choose to leave those rows out.`,
        result.rows.filter((r) => r.action === 'error').slice(0, 50).map((r) => ({ path: `row ${r.row}`, message: r.errors.join(' ') })),
      );
    }
    const created: string[] = [];
    const updated: string[] = [];
    for (const r of result.rows) {
      if (r.action === 'create') created.push(await createPatient(tx, actor, r.values!));
      else if (r.action === 'update') {
        await updatePatient(tx, actor, r.existing!, r.values!);
        updated.push(r.existing!.id);
      }
    }
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'patients.imported',
      entityType: 'clinic',
      entityId: actor.clinicId,
      details: {
        file: input.fileName,
        duplicates: input.duplicates,
        mapping: result.mapping,
        ...result.summary,
        created: created.length,
        updated: updated.length,
        leftOut: result.rows.filter((r) => r.action === 'error').map((r) => ({ row: r.row, errors: r.errors })),
      },
    });
    await publish(tx, { type: 'settings.updated', clinicId: actor.clinicId, id: actor.clinicId });
    return { ...result.summary, created: created.length, updated: updated.length };
  });
}

/** Where an import's values land: the patient's own fields and its owner's. */
function patientFields(v: ImportRowValues) {
  return { name: v.name, species: v.species, breed: v.breed, sex: v.sex, dateOfBirth: v.dateOfBirth, weightKg: v.weightKg };
}
function ownerFields(v: ImportRowValues) {
  return v.ownerName ? { name: v.ownerName, phone: v.ownerPhone, email: v.ownerEmail } : null;
}

async function createPatient(tx: Executor, actor: Actor, v: ImportRowValues): Promise<string> {
  const owner = ownerFields(v);
  const [ownerRow] = owner ? await tx.insert(owners).values({ clinicId: actor.clinicId, ...owner }).returning({ id: owners.id }) : [];
  const [row] = await tx
    .insert(patients)
    .values({ clinicId: actor.clinicId, recordNumber: v.recordNumber, ...patientFields(v), ownerId: ownerRow?.id ?? null })
    .returning({ id: patients.id });
  await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'patient.imported', entityType: 'patient', entityId: row.id, details: { recordNumber: v.recordNumber } });
  return row.id;
}

async function updatePatient(tx: Executor, actor: Actor, existing: { id: string; ownerId: string | null }, v: ImportRowValues) {
  const owner = ownerFields(v);
  let ownerId = existing.ownerId;
  if (owner && ownerId) await tx.update(owners).set(owner).where(eq(owners.id, ownerId));
  else if (owner) [{ id: ownerId }] = await tx.insert(owners).values({ clinicId: actor.clinicId, ...owner }).returning({ id: owners.id });
  await tx.update(patients).set({ ...patientFields(v), ownerId }).where(eq(patients.id, existing.id));
  await recordAudit(tx, { clinicId: actor.clinicId, actorUserId: actor.userId, action: 'patient.updated-by-import', entityType: 'patient', entityId: existing.id, details: { recordNumber: v.recordNumber, values: v } });
}
