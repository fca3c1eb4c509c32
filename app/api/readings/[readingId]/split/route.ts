import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { splitReading } from '@/lib/readings/panel';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const readingId = idParam.parse((await params).readingId);
  return json({ split: await splitReading(actor, readingId) });
});
