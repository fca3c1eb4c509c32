import { requireActor } from '@/lib/auth/guards';
import { listInvitations } from '@/lib/auth/staff-links';
import { apiRoute, json } from '@/lib/http';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ invitations: await listInvitations(actor) });
});
