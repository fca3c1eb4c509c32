import { endSession } from '@/lib/auth/sign-in';
import { SESSION_COOKIE, cookieValue, sessionCookie } from '@/lib/auth/session';
import { apiRoute, json } from '@/lib/http';

export const POST = apiRoute(async (request) => {
  await endSession(cookieValue(request.headers.get('cookie'), SESSION_COOKIE));
  const response = json({ signedOut: true });
  response.cookies.set(sessionCookie('', 0));
  return response;
});
