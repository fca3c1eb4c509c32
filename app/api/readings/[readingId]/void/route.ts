import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { voidReading } from '@/lib/readings/assign';
import { idParam, voidSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'voidReadings');
  const readingId = idParam.parse((await params).readingId);
  const { reason, onRecord } = await readJson(request, voidSchema);
  return json(await voidReading(actor, readingId, reason, { onRecord }));
});
