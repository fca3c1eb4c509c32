import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { matchingReport } from '@/lib/readings/matching-report';

/** The clinic's last 30 days replayed through the matcher, against what the technicians kept. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ report: await matchingReport(actor) });
});
