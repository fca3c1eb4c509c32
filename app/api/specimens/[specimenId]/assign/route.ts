import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { assignSpecimen } from '@/lib/readings/panel';
import { idParam, panelAssignSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ specimenId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const specimenId = idParam.parse((await params).specimenId);
  return json({ panel: await assignSpecimen(actor, specimenId, await readJson(request, panelAssignSchema)) });
});
