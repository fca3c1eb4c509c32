import { requireActor } from '@/lib/auth/guards';
import { unreviewedResults } from '@/lib/clinical/review';
import { apiRoute, json, readQuery } from '@/lib/http';
import { unreviewedQuery } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { mine } = readQuery(request, unreviewedQuery);
  return json({ results: await unreviewedResults(actor, mine === '1') });
});
