import { requireActor } from '@/lib/auth/guards';
import { acknowledgeAlert } from '@/lib/clinical/review';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam } from '@/lib/validation/api';
import { acknowledgeSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ alertId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'reviewResults');
  const alertId = idParam.parse((await params).alertId);
  const { note } = await readJson(request, acknowledgeSchema);
  return json({ alert: await acknowledgeAlert(actor, alertId, note) });
});
