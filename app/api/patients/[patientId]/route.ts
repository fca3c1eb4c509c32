import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { getPatient, updatePatient } from '@/lib/patients';
import { idParam } from '@/lib/validation/api';
import { patientInputSchema } from '@/lib/validation/patients';

type Ctx = { params: Promise<{ patientId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  return json({ patient: await getPatient(actor, patientId) });
});

/** Saves the whole edited record (the form sends every field). */
export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'managePatients');
  const patientId = idParam.parse((await params).patientId);
  const input = await readJson(request, patientInputSchema);
  await updatePatient(actor, patientId, input);
  return json({ patient: await getPatient(actor, patientId) });
});
