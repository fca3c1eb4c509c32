import { requireActor } from '@/lib/auth/guards';
import { listAlerts } from '@/lib/clinical/review';
import { apiRoute, json, readQuery } from '@/lib/http';
import { alertsQuery } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { status, mine } = readQuery(request, alertsQuery);
  return json({ alerts: await listAlerts(actor, { status, mine: mine === 'duty' ? 'duty' : mine === '1' }) });
});
