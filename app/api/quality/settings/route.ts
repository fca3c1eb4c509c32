import { requireActor } from '@/lib/auth/guards';
import { db } from '@/db/client';
import { apiRoute, json, readJson } from '@/lib/http';
import { clinicClock, updateQualitySettings } from '@/lib/quality/store';
import { qualitySettingsUpdateSchema } from '@/lib/validation/quality';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ settings: (await clinicClock(await db(), actor.clinicId)).settings });
});

export const PATCH = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, qualitySettingsUpdateSchema);
  return json({ settings: await updateQualitySettings(actor, input) });
});
