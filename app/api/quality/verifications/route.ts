import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { listVerifications, recordVerification } from '@/lib/quality/store';
import { verificationSchema } from '@/lib/validation/quality';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  return json({ verifications: await listVerifications(actor) });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageQuality');
  const input = await readJson(request, verificationSchema);
  return json({ verification: await recordVerification(actor, input) }, { status: 201 });
});
