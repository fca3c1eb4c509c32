import { requireBridge } from '@/lib/auth/guards';
import { recordHeartbeat } from '@/lib/devices';
import { apiRoute, json, readJson } from '@/lib/http';
import { bridgeHeartbeatSchema } from '@/lib/validation/readings';

export const POST = apiRoute(async (request) => {
  const bridge = await requireBridge(request);
  const heartbeat = await readJson(request, bridgeHeartbeatSchema);
  await recordHeartbeat(bridge, heartbeat);
  return json({ ok: true, serverTime: new Date().toISOString() });
});
