import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { outboxMessage } from '@/lib/mail/outbox';

type Ctx = { params: Promise<{ messageId: string }> };

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  await requireActor(request, 'readResults');
  return json({ message: await outboxMessage((await params).messageId) });
});
