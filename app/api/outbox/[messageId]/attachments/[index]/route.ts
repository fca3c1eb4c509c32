import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute } from '@/lib/http';
import { outboxAttachment } from '@/lib/mail/outbox';

type Ctx = { params: Promise<{ messageId: string; index: string }> };

const indexParam = z.coerce.number().int().min(0).max(99);

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  await requireActor(request, 'readResults');
  const { messageId, index } = await params;
  const attachment = await outboxAttachment(messageId, indexParam.parse(index));
  return new Response(new Uint8Array(attachment.content), {
    headers: {
      'content-type': attachment.contentType,
      'content-disposition': `attachment; filename="${attachment.filename.replace(/["\\\r\n]/g, '_')}"`,
      'cache-control': 'no-store',
    },
  });
});
