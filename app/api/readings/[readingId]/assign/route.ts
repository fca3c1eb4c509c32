import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { assignReading } from '@/lib/readings/assign';
import { assignSchema, idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const readingId = idParam.parse((await params).readingId);
  const { patientId, orderId, method } = await readJson(request, assignSchema);
  return json({ assignment: await assignReading(actor, readingId, patientId, { orderId, method }) });
});
