import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { listMail } from '@/lib/mail/queue';
import { mailQuery } from '@/lib/validation/clinical';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const { status } = readQuery(request, mailQuery);
  return json({ mail: await listMail(actor, { status }) });
});
