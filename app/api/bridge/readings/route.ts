import { requireBridge } from '@/lib/auth/guards';
import { BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { ingestBatch } from '@/lib/readings/ingest';
import { bridgeBatchSchema } from '@/lib/validation/readings';

/** Bridges post spooled records here; resends are acknowledged as duplicates, never stored twice. */
export const POST = apiRoute(async (request) => {
  const bridge = await requireBridge(request);
  const batch = await readJson(request, bridgeBatchSchema, { limit: BODY_LIMITS.bridge, text: 'instrument' });
  return json(await ingestBatch(bridge, batch));
});
