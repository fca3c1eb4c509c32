import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { saveProfileVersion } from '@/lib/profiles';
import { idParam } from '@/lib/validation/api';
import { saveProfileSchema } from '@/lib/validation/profile';

type Ctx = { params: Promise<{ profileKey: string }> };

/** A change to a profile is a new version; bridges pick it up on their next config poll. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const key = idParam.parse((await params).profileKey);
  const input = await readJson(request, saveProfileSchema);
  return json({ profile: await saveProfileVersion(actor, { ...input, key }) }, { status: 201 });
});
