import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { updateKitLot } from '@/lib/quality/store';
import { idParam } from '@/lib/validation/api';
import { kitLotUpdateSchema } from '@/lib/validation/quality';

type Ctx = { params: Promise<{ lotId: string }> };

export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageQuality');
  const lotId = idParam.parse((await params).lotId);
  const input = await readJson(request, kitLotUpdateSchema);
  return json({ kitLot: await updateKitLot(actor, lotId, input) });
});
