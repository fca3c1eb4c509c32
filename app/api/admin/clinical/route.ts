import { requireActor } from '@/lib/auth/guards';
import { clinicalConfiguration, updateClinicalSettings } from '@/lib/clinical/config';
import { apiRoute, json, readJson } from '@/lib/http';
import { clinicalSettingsPatchSchema } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json(await clinicalConfiguration(actor));
});

export const PATCH = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, clinicalSettingsPatchSchema);
  return json({ settings: await updateClinicalSettings(actor, input) });
});
