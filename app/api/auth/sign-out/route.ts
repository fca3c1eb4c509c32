import { sessionCookie } from '@/lib/auth/session';
import { apiRoute, json } from '@/lib/http';

export const POST = apiRoute(async () => {
  const response = json({ signedOut: true });
  response.cookies.set(sessionCookie('', 0));
  return response;
});
