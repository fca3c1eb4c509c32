import { db } from '@/db/client';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson, readQuery } from '@/lib/http';
import { listOrders, startOrder } from '@/lib/orders';
import { clinicTiming } from '@/lib/readings/suggestions';
import { newOrderSchema, ordersQuery } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const filter = readQuery(request, ordersQuery);
  // The clinic's learned timing goes with the list, so the Bench judges "probably aborted" with the
  // same estimate the matcher uses.
  const [orders, timing] = await Promise.all([listOrders(actor, filter), clinicTiming(await db(), actor.clinicId)]);
  return json({ orders, timing, now: new Date().toISOString() });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'assignReadings');
  const input = await readJson(request, newOrderSchema);
  return json({ order: await startOrder(actor, input) }, { status: 201 });
});
