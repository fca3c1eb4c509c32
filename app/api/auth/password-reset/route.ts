import { apiRoute, json, readJson } from '@/lib/http';
import { requestPasswordReset } from '@/lib/auth/staff-links';
import { resetRequestSchema } from '@/lib/validation/api';

/** Asks for a reset link by e-mail; the same answer whether or not the address has an account. */
export const POST = apiRoute(async (request) => {
  const { email } = await readJson(request, resetRequestSchema);
  await requestPasswordReset(email);
  return json({ ok: true, message: 'If this address has an account, a reset link is on its way.' }, { status: 202 });
});
