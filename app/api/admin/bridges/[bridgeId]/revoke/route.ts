import { requireActor } from '@/lib/auth/guards';
import { revokeBridge } from '@/lib/devices';
import { apiRoute, json } from '@/lib/http';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ bridgeId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const bridgeId = idParam.parse((await params).bridgeId);
  return json({ bridge: await revokeBridge(actor, bridgeId) });
});
