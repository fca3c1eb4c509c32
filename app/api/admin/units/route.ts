import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { listInstrumentUnits } from '@/lib/readings/instrument-units';

/** Units instruments printed that UCUM cannot read, per instrument, with their mappings. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ units: await listInstrumentUnits(actor) });
});
