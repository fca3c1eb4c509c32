import { startSession } from '@/lib/auth/sign-in';
import { ApiError, BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { authenticate } from '@/lib/staff';
import { signInSchema } from '@/lib/validation/api';

export const POST = apiRoute(async (request) => {
  const { email, password } = await readJson(request, signInSchema, { limit: BODY_LIMITS.small });
  const result = await authenticate(email, password);
  if ('refused' in result) {
    if (result.refused === 'deactivated') {
      throw new ApiError(403, 'account_deactivated', 'This account is deactivated. Ask your clinic’s administrator to reactivate it.');
    }
    throw new ApiError(401, 'invalid_credentials', 'The e-mail address or the password is wrong.');
  }
  const { user } = result;
  const response = json({ user: { id: user.id, displayName: user.displayName, role: user.role, mustChangePassword: user.mustChangePassword } });
  response.cookies.set(await startSession(user));
  return response;
});
