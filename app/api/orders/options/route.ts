import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { orderFormOptions } from '@/lib/orders';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json(await orderFormOptions(actor));
});
