import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { voidSpecimen } from '@/lib/readings/panel';
import { idParam, panelVoidSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ specimenId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'voidReadings');
  const specimenId = idParam.parse((await params).specimenId);
  return json({ panel: await voidSpecimen(actor, specimenId, await readJson(request, panelVoidSchema)) });
});
