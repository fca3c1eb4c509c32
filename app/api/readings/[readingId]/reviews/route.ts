import { requireActor } from '@/lib/auth/guards';
import { reviewResult } from '@/lib/clinical/review';
import { apiRoute, json, readJson } from '@/lib/http';
import { idParam } from '@/lib/validation/api';
import { reviewSchema } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ readingId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'reviewResults');
  const readingId = idParam.parse((await params).readingId);
  const input = await readJson(request, reviewSchema);
  return json(await reviewResult(actor, readingId, input), { status: 201 });
});
