import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { createControlMaterial } from '@/lib/quality/store';
import { controlMaterialSchema } from '@/lib/validation/quality';

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageQuality');
  const input = await readJson(request, controlMaterialSchema);
  return json({ material: await createControlMaterial(actor, input) }, { status: 201 });
});
