import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { retryMail } from '@/lib/mail/queue';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ mailId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const mailId = idParam.parse((await params).mailId);
  return json({ mail: await retryMail(actor, mailId) });
});
