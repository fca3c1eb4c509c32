import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { getProfile } from '@/lib/profiles';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ profileKey: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const key = idParam.parse((await params).profileKey);
  return json({ profile: await getProfile(actor, key) });
});
