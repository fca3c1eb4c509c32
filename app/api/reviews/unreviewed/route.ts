import { requireActor } from '@/lib/auth/guards';
import { unreviewedResults } from '@/lib/clinical/review';
import { apiRoute, readQuery } from '@/lib/http';
import { unreviewedQuery } from '@/lib/validation/clinical';
import { cachedViewResponse } from '@/lib/view-cache';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { mine } = readQuery(request, unreviewedQuery);
  // Worked out again only when a result of the clinic or its set-up changed (lib/view-cache.ts).
  const key = `review:${actor.clinicId}:${mine === '1' ? actor.userId : 'all'}`;
  return cachedViewResponse(key, [`results:${actor.clinicId}`, 'setup'], async () => ({ results: await unreviewedResults(actor, mine === '1') }));
});
