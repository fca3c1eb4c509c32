import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { suggestionsFor } from '@/lib/readings/suggestions';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const readingId = idParam.parse((await params).readingId);
  return json(await suggestionsFor(actor, readingId));
});
