import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { searchPatients } from '@/lib/patients';
import { patientSearchQuery } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { q, limit } = readQuery(request, patientSearchQuery);
  return json({ patients: await searchPatients(actor, q, limit) });
});
