import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { suggestionsForUnassigned } from '@/lib/readings/suggestions';
import { suggestionsQuery } from '@/lib/validation/api';

/**
 * The top candidates for waiting readings, weighed together: for the readings Intake shows (`readings`, its
 * page) or, without it, for every waiting reading.
 */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { readings } = readQuery(request, suggestionsQuery);
  return json({ suggestions: await suggestionsForUnassigned(actor, 3, readings) });
});
