import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { listOutbox } from '@/lib/mail/outbox';

/** Demo only: the messages the local mail sink received. */
export const GET = apiRoute(async (request) => {
  await requireActor(request, 'readResults');
  return json({ messages: await listOutbox() });
});
