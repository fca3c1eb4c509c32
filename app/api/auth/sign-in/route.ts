import { startSession } from '@/lib/auth/sign-in';
import { checkSignInAllowed, clearAccountFailures, clientAddress, recordFailedSignIn } from '@/lib/auth/throttle';
import { ApiError, BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { authenticate } from '@/lib/staff';
import { signInSchema } from '@/lib/validation/api';

export const POST = apiRoute(async (request) => {
  const { email, password } = await readJson(request, signInSchema, { limit: BODY_LIMITS.small });
  const address = clientAddress(request);
  await checkSignInAllowed(email, address);
  const user = await authenticate(email, password, { address });
  if (!user) {
    await recordFailedSignIn(email, address);
    throw new ApiError(401, 'invalid_credentials', 'That e-mail and password do not match an active account.');
  }
  await clearAccountFailures(email);
  const response = json({ user: { id: user.id, displayName: user.displayName, role: user.role } });
  response.cookies.set(await startSession(user));
  return response;
});
