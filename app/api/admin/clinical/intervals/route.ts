import { requireActor } from '@/lib/auth/guards';
import { saveInterval } from '@/lib/clinical/config';
import { apiRoute, json, readJson } from '@/lib/http';
import { intervalSchema } from '@/lib/validation/clinical';

/** Adds or replaces the interval for one analyte, species and (optional) instrument. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, intervalSchema);
  return json({ interval: await saveInterval(actor, input) });
});
