import { requireActor } from '@/lib/auth/guards';
import { setInstrumentInService } from '@/lib/devices';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam, instrumentServiceSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ instrumentId: string }> };

/** Retires an instrument ({active:false}) or returns it to service ({active:true}), with a reason. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const instrumentId = idParam.parse((await params).instrumentId);
  const input = await readJson(request, instrumentServiceSchema);
  return json({ instrument: await setInstrumentInService(actor, instrumentId, input) });
});
