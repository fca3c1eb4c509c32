import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { setPatientStatus } from '@/lib/patients';
import { idParam } from '@/lib/validation/api';
import { patientStatusSchema } from '@/lib/validation/patients';

type Ctx = { params: Promise<{ patientId: string }> };

/** Deceased, archived or active again, with a reason. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'managePatients');
  const patientId = idParam.parse((await params).patientId);
  const input = await readJson(request, patientStatusSchema);
  return json({ patient: await setPatientStatus(actor, patientId, input) });
});
