import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { patientResults } from '@/lib/readings/queries';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ patientId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  return json({ results: await patientResults(actor, patientId) });
});
