import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { mergePatients } from '@/lib/patients';
import { idParam } from '@/lib/validation/api';
import { mergePatientsSchema } from '@/lib/validation/patients';

type Ctx = { params: Promise<{ patientId: string }> };

/** Merges the duplicate record named in the body into the record in the URL. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'managePatients');
  const patientId = idParam.parse((await params).patientId);
  const input = await readJson(request, mergePatientsSchema);
  return json({ merge: await mergePatients(actor, patientId, input) });
});
