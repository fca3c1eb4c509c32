import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { updateStaff } from '@/lib/staff';
import { idParam, updateStaffSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ userId: string }> };

export const PATCH = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const userId = idParam.parse((await params).userId);
  const change = await readJson(request, updateStaffSchema);
  return json({ staff: await updateStaff(actor, userId, change) });
});
