import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { listCaptures } from '@/lib/readings/queries';

const query = z.object({ status: z.enum(['open', 'transcribed', 'dismissed']).default('open') });

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { status } = readQuery(request, query);
  return json({ captures: await listCaptures(actor, status) });
});
