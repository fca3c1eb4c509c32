import { requireActor } from '@/lib/auth/guards';
import { instrumentsNeedingAttention } from '@/lib/devices';
import { apiRoute, json } from '@/lib/http';

/** For the bench: instruments whose link the bridge reports as down or noisy. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ instruments: await instrumentsNeedingAttention(actor) });
});
