import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { qcOverview } from '@/lib/quality/overview';

/** The QC page: controls with Levey-Jennings points and Westgard results, sigma, kit lots, intervals. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json(await qcOverview(actor));
});
