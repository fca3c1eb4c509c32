import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { setTemporaryPassword } from '@/lib/staff';
import { idParam, temporaryPasswordSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ userId: string }> };

/** Sets a temporary password: the person's sessions end, and they choose their own at the next sign-in. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const userId = idParam.parse((await params).userId);
  const { password } = await readJson(request, temporaryPasswordSchema);
  return json({ staff: await setTemporaryPassword(actor, userId, password) });
});
