import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { updateAnalyte } from '@/lib/clinical/config';
import { apiRoute, json, readJson } from '@/lib/http';
import { analyteSettingsSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ code: string }> };

export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const code = z.string().trim().min(1).max(64).parse((await params).code);
  const input = await readJson(request, analyteSettingsSchema);
  return json({ analyte: await updateAnalyte(actor, code, input) });
});
