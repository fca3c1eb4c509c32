import { requireActor } from '@/lib/auth/guards';
import { apiRoute, readQuery } from '@/lib/http';
import { patientChart } from '@/lib/clinical/chart';
import { chartQuery, idParam } from '@/lib/validation/api';
import { cachedViewResponse } from '@/lib/view-cache';

type Ctx = { params: Promise<{ patientId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  const { limit } = readQuery(request, chartQuery);
  // The newest `limit` results carry their clinical reading (flag, change, delta check, review); `trend` has
  // a point for every result, `total` how many there are, `analytes` the units and intervals.
  // Worked out again only when the patient's results or the clinic's set-up changed (lib/view-cache.ts).
  const key = `chart:${actor.clinicId}:${patientId}:${limit ?? 'all'}`;
  return cachedViewResponse(key, [`patient:${patientId}`, 'setup'], () => patientChart(actor, patientId, { limit }));
});
