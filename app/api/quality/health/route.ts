import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { labHealth } from '@/lib/quality/health';

/** Per instrument: port, last byte and reading, captures, link errors, kit lot, QC; bridges offline after the timeout. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json(await labHealth(actor));
});
