import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { getReading } from '@/lib/readings/queries';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const readingId = idParam.parse((await params).readingId);
  return json({ reading: await getReading(actor, readingId) });
});
