import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { listTemperatures, logTemperature } from '@/lib/quality/store';
import { temperatureEntrySchema } from '@/lib/validation/quality';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ entries: await listTemperatures(actor) });
});

/** One entry per day: a second entry for the same day replaces the first (the audit trail keeps both). */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageQuality');
  const input = await readJson(request, temperatureEntrySchema);
  return json({ entry: await logTemperature(actor, input) }, { status: 201 });
});
