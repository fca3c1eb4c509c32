import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { mapInstrumentUnit } from '@/lib/readings/instrument-units';
import { idParam, unitMappingSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ unitId: string }> };

/** Maps a printed unit to a UCUM unit for the readings that arrive from now on (null removes it). */
export const PUT = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const unitId = idParam.parse((await params).unitId);
  const input = await readJson(request, unitMappingSchema);
  return json({ unit: await mapInstrumentUnit(actor, unitId, input) });
});
