import { requireActor } from '@/lib/auth/guards';
import { inviteStaff } from '@/lib/auth/staff-links';
import { apiRoute, json, readJson } from '@/lib/http';
import { inviteStaffSchema } from '@/lib/validation/api';

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, inviteStaffSchema);
  return json({ invitation: await inviteStaff(actor, input) }, { status: 201 });
});
