import { requireActor } from '@/lib/auth/guards';
import { resendInvitation } from '@/lib/auth/staff-links';
import { apiRoute, json } from '@/lib/http';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ userId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const userId = idParam.parse((await params).userId);
  return json({ invitation: await resendInvitation(actor, userId) });
});
