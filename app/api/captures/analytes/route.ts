import { requireActor } from '@/lib/auth/guards';
import { typableAnalytes } from '@/lib/captures';
import { apiRoute, json } from '@/lib/http';

/** The clinic's tests and their units, for typing a result in from an unparsed capture. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'assignReadings');
  return json({ analytes: await typableAnalytes(actor) });
});
