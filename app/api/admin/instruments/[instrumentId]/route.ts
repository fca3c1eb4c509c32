import { requireActor } from '@/lib/auth/guards';
import { updateInstrument } from '@/lib/devices';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam, newInstrumentSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ instrumentId: string }> };

/** Saves an edited instrument (the whole form; the code cannot change). */
export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const instrumentId = idParam.parse((await params).instrumentId);
  const input = await readJson(request, newInstrumentSchema);
  return json({ instrument: await updateInstrument(actor, instrumentId, input) });
});
