import { startSession } from '@/lib/auth/sign-in';
import { checkSignInAllowed, clearAccountFailures, clientAddress, recordFailedSignIn } from '@/lib/auth/throttle';
import { ApiError, BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { authenticate } from '@/lib/staff';
import { signInSchema } from '@/lib/validation/api';

export const POST = apiRoute(async (request) => {
  const { email, password } = await readJson(request, signInSchema, { limit: BODY_LIMITS.small });
  const address = clientAddress(request);
  await checkSignInAllowed(email, address);
  const result = await authenticate(email, password, { address });
  if ('refused' in result) {
    await recordFailedSignIn(email, address);
    if (result.refused === 'deactivated') {
      throw new ApiError(403, 'account_deactivated', 'This account is deactivated. Ask your clinic’s administrator to reactivate it.');
    }
    throw new ApiError(401, 'invalid_credentials', 'The e-mail address or the password is wrong.');
  }
  await clearAccountFailures(email);
  const { user } = result;
  const response = json({ user: { id: user.id, displayName: user.displayName, role: user.role, mustChangePassword: user.mustChangePassword } });
  response.cookies.set(await startSession(user));
  return response;
});
