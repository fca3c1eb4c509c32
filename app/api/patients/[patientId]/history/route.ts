import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { resultsTakenOff } from '@/lib/readings/history';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ patientId: string }> };

/** Results that left this patient's record (moved, voided, back to Intake), with who, when and why. */
export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  return json({ takenOff: await resultsTakenOff(actor, patientId) });
});
