import { requireActor } from '@/lib/auth/guards';
import { signOffResults } from '@/lib/clinical/review';
import { apiRoute, json, readJson } from '@/lib/http';
import { signOffSchema } from '@/lib/validation/clinical';

/** Signs off one or many results from the Review list, all or none, with an optional comment. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'reviewResults');
  const { readingIds, comment } = await readJson(request, signOffSchema);
  return json(await signOffResults(actor, readingIds, comment), { status: 201 });
});
