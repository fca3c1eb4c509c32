import { requireActor } from '@/lib/auth/guards';
import { dismissCapture } from '@/lib/captures';
import { apiRoute, json, readJson } from '@/lib/http';
import { dismissCaptureSchema, idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ captureId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const captureId = idParam.parse((await params).captureId);
  const { reason } = await readJson(request, dismissCaptureSchema);
  return json(await dismissCapture(actor, captureId, reason));
});
