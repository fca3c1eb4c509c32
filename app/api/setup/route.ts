import { startSession } from '@/lib/auth/sign-in';
import { BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { clinicCount, createFirstClinic } from '@/lib/staff';
import { setupSchema } from '@/lib/validation/api';

export const dynamic = 'force-dynamic';

export const GET = apiRoute(async () => json({ needsSetup: (await clinicCount()) === 0 }));

/** First run only: creates the clinic and its first administrator, then signs them in. */
export const POST = apiRoute(async (request) => {
  const input = await readJson(request, setupSchema, { limit: BODY_LIMITS.small });
  const { clinic, admin } = await createFirstClinic(input);
  const response = json({ clinic: { id: clinic.id, name: clinic.name } }, { status: 201 });
  response.cookies.set(await startSession(admin));
  return response;
});
