import { requireActor } from '@/lib/auth/guards';
import { transcribeCapture } from '@/lib/captures';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam, transcribeCaptureSchema } from '@/lib/validation/api';

type Ctx = { params: Promise<{ captureId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'assignReadings');
  const captureId = idParam.parse((await params).captureId);
  const input = await readJson(request, transcribeCaptureSchema);
  return json(await transcribeCapture(actor, captureId, input), { status: 201 });
});
