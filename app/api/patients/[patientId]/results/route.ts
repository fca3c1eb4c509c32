import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { patientChart } from '@/lib/clinical/chart';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ patientId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  // Each result carries its clinical reading (flag, change, delta check, review); `analytes` the units and intervals.
  return json(await patientChart(actor, patientId));
});
