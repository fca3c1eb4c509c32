import { requireActor } from '@/lib/auth/guards';
import { updateProtocol } from '@/lib/clinical/config';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam } from '@/lib/validation/api';
import { protocolSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ protocolId: string }> };

export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const protocolId = idParam.parse((await params).protocolId);
  const input = await readJson(request, protocolSchema);
  return json({ protocol: await updateProtocol(actor, protocolId, input) });
});
