import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { listReadings } from '@/lib/readings/queries';
import { readingStatusQuery } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const filter = readQuery(request, readingStatusQuery);
  return json({ readings: await listReadings(actor, filter) });
});
