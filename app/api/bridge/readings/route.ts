import { requireBridge } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { ingestBatch } from '@/lib/readings/ingest';
import { bridgeBatchSchema } from '@/lib/validation/readings';

/** Bridges post spooled records here; resends are acknowledged as duplicates, never stored twice. */
export const POST = apiRoute(async (request) => {
  const bridge = await requireBridge(request);
  const batch = await readJson(request, bridgeBatchSchema);
  return json(await ingestBatch(bridge, batch));
});
