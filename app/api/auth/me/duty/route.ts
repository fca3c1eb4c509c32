import { requireActor } from '@/lib/auth/guards';
import { setOnDuty } from '@/lib/clinical/escalation';
import { apiRoute, json, readJson } from '@/lib/http';
import { dutySchema } from '@/lib/validation/clinical';

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'reviewResults');
  const { onDuty } = await readJson(request, dutySchema);
  return json({ user: await setOnDuty(actor, onDuty) });
});
