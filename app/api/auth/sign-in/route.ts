import { startSession } from '@/lib/auth/sign-in';
import { ApiError, BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { authenticate } from '@/lib/staff';
import { signInSchema } from '@/lib/validation/api';

export const POST = apiRoute(async (request) => {
  const { email, password } = await readJson(request, signInSchema, { limit: BODY_LIMITS.small });
  const user = await authenticate(email, password);
  if (!user) throw new ApiError(401, 'invalid_credentials', 'That e-mail and password do not match an active account.');
  const response = json({ user: { id: user.id, displayName: user.displayName, role: user.role } });
  response.cookies.set(await startSession(user));
  return response;
});
