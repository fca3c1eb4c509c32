import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { setOperatingRange } from '@/lib/quality/store';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ instrumentId: string }> };

const rangeSchema = z.object({
  minC: z.number().min(-30).max(60).nullable(),
  maxC: z.number().min(-30).max(60).nullable(),
});

/** The room temperature the instrument may run at (from its manual), checked against the daily log. */
export const PUT = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const instrumentId = idParam.parse((await params).instrumentId);
  const input = await readJson(request, rangeSchema);
  return json(await setOperatingRange(actor, instrumentId, input));
});
