import { requireActor } from '@/lib/auth/guards';
import { addInstrument, listInstruments } from '@/lib/devices';
import { apiRoute, json, readJson } from '@/lib/http';
import { newInstrumentSchema } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ instruments: await listInstruments(actor) });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, newInstrumentSchema);
  return json({ instrument: await addInstrument(actor, input) }, { status: 201 });
});
