import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { addStaff, listStaff } from '@/lib/staff';
import { newStaffSchema } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ staff: await listStaff(actor) });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, newStaffSchema);
  return json({ staff: await addStaff(actor, input) }, { status: 201 });
});
