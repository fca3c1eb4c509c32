import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { listProfiles, saveProfileVersion } from '@/lib/profiles';
import { saveProfileSchema } from '@/lib/validation/profile';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ profiles: await listProfiles(actor) });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const input = await readJson(request, saveProfileSchema);
  return json({ profile: await saveProfileVersion(actor, input) }, { status: 201 });
});
