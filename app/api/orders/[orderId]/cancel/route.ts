import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { closeOrder } from '@/lib/orders';
import { idParam } from '@/lib/validation/api';
import { closeOrderSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ orderId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const orderId = idParam.parse((await params).orderId);
  const { reason } = await readJson(request, closeOrderSchema);
  return json({ order: await closeOrder(actor, orderId, 'cancelled', reason) });
});
