import { requireActor } from '@/lib/auth/guards';
import { installDefaultsFor } from '@/lib/clinical/config';
import { apiRoute, json } from '@/lib/http';

/** Installs the built-in analyte, protocol and interval defaults the clinic lacks (each with its source). */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ added: await installDefaultsFor(actor) });
});
