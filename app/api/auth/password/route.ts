import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { changeOwnPassword } from '@/lib/staff';
import { changeOwnPasswordSchema } from '@/lib/validation/api';

/** The signed-in person changes their own password (required after a temporary one). */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, undefined, { whilePasswordChangeRequired: true });
  const input = await readJson(request, changeOwnPasswordSchema);
  await changeOwnPassword(actor, input);
  return json({ ok: true });
});
