import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { reassignReading } from '@/lib/readings/assign';
import { idParam } from '@/lib/validation/api';
import { reassignSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ readingId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const readingId = idParam.parse((await params).readingId);
  const input = await readJson(request, reassignSchema);
  return json({ assignment: await reassignReading(actor, readingId, input) });
});
