import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, undefined, { whilePasswordChangeRequired: true });
  return json({ user: actor });
});
