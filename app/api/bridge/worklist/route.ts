import { requireBridge } from '@/lib/auth/guards';
import { bridgeWorklist } from '@/lib/bridge-config';
import { apiRoute, json } from '@/lib/http';

/** Open tests on this bridge's instruments; the demo's simulated analyzers run only what is on it. */
export const GET = apiRoute(async (request) => {
  const bridge = await requireBridge(request);
  return json(await bridgeWorklist(bridge), { headers: { 'cache-control': 'no-store' } });
});
