import { apiRoute, json, readJson } from '@/lib/http';
import { setPasswordWithToken } from '@/lib/auth/staff-links';
import { setPasswordSchema } from '@/lib/validation/api';

/** Sets a password from an invitation or reset link (single use, expiring). */
export const POST = apiRoute(async (request) => {
  const { token, password } = await readJson(request, setPasswordSchema);
  return json(await setPasswordWithToken(token, password));
});
