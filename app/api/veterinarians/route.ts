import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { listVeterinarians } from '@/lib/patients';

/** Who can be a patient's attending veterinarian. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ veterinarians: await listVeterinarians(actor) });
});
