import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson, readQuery } from '@/lib/http';
import { createKitLot, listKitLots } from '@/lib/quality/store';
import { kitLotSchema } from '@/lib/validation/quality';
import { z } from 'zod';

const query = z.object({ finished: z.enum(['include', 'exclude']).default('exclude') });

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const { finished } = readQuery(request, query);
  return json({ kitLots: await listKitLots(actor, finished === 'include') });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageQuality');
  const input = await readJson(request, kitLotSchema);
  return json({ kitLot: await createKitLot(actor, input) }, { status: 201 });
});
