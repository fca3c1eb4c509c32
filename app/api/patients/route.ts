import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson, readQuery } from '@/lib/http';
import { createPatient, searchPatients } from '@/lib/patients';
import { patientInputSchema, patientListQuery } from '@/lib/validation/patients';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { q, limit, species, status } = readQuery(request, patientListQuery);
  return json({ patients: await searchPatients(actor, q, limit, { species, status }) });
});

/** Registers a patient; 400 names each invalid field, 409 a record number already in use. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'managePatients');
  const input = await readJson(request, patientInputSchema);
  return json({ patient: await createPatient(actor, input) }, { status: 201 });
});
