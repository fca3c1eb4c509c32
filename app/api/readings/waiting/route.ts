import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { listWaiting } from '@/lib/readings/queries';
import { waitingQuery } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json(await listWaiting(actor, readQuery(request, waitingQuery)));
});
