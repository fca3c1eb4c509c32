import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson, readQuery } from '@/lib/http';
import { listOrders, startOrder } from '@/lib/orders';
import { newOrderSchema, ordersQuery } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const filter = readQuery(request, ordersQuery);
  return json({ orders: await listOrders(actor, filter), now: new Date().toISOString() });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'assignReadings');
  const input = await readJson(request, newOrderSchema);
  return json({ order: await startOrder(actor, input) }, { status: 201 });
});
