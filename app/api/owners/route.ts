import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { searchOwners } from '@/lib/patients';
import { ownerSearchQuery } from '@/lib/validation/patients';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'managePatients');
  const { q } = readQuery(request, ownerSearchQuery);
  return json({ owners: await searchOwners(actor, q) });
});
