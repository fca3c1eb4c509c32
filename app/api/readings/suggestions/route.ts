import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { suggestionsForUnassigned } from '@/lib/readings/suggestions';

/** The top candidates for every reading waiting in Intake (one request for the whole board). */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ suggestions: await suggestionsForUnassigned(actor) });
});
