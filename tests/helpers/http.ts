import { POST as signInRoute } from '@/app/api/auth/sign-in/route';
import { DEMO_PASSWORD } from '@/db/seed';

const BASE = 'http://benchwire.test';

/** Builds a Request the way Next hands it to a route handler. */
export function request(
  path: string,
  init: { method?: string; body?: unknown; cookie?: string; token?: string; headers?: Record<string, string> } = {},
) {
  const headers: Record<string, string> = { ...init.headers };
  if (init.body !== undefined && !headers['content-type']) headers['content-type'] = 'application/json';
  if (init.cookie) headers.cookie = init.cookie;
  if (init.token) headers.authorization = `Bearer ${init.token}`;
  return new Request(BASE + path, {
    method: init.method ?? (init.body === undefined ? 'GET' : 'POST'),
    headers,
    body: init.body === undefined ? undefined : typeof init.body === 'string' ? init.body : JSON.stringify(init.body),
  });
}

export const params = <T extends Record<string, string>>(value: T) => ({ params: Promise.resolve(value) });

/** Signs in through the real route and returns the Cookie header a browser would send back. */
export async function signIn(email: string, password = DEMO_PASSWORD): Promise<string> {
  const response = await signInRoute(request('/api/auth/sign-in', { body: { email, password } }), undefined);
  if (response.status !== 200) throw new Error(`sign-in failed for ${email}: ${response.status} ${await response.text()}`);
  const setCookie = response.headers.get('set-cookie') ?? '';
  return setCookie.split(';')[0];
}
