import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { establishControlTarget } from '@/lib/quality/store';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ materialId: string }> };

/** Sets the control's target mean and SD from its own runs (at least 20). */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageQuality');
  const materialId = idParam.parse((await params).materialId);
  return json({ material: await establishControlTarget(actor, materialId) });
});
