import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { setQualityGoal } from '@/lib/quality/store';
import { qualityGoalSchema } from '@/lib/validation/quality';

/** Allowable total error for an analyte, with its source (shown beside every sigma). */
export const PUT = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageQuality');
  const input = await readJson(request, qualityGoalSchema);
  return json({ goal: await setQualityGoal(actor, input) });
});
