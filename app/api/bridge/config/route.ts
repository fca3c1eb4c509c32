import { requireBridge } from '@/lib/auth/guards';
import { bridgeConfig } from '@/lib/bridge-config';
import { apiRoute, json } from '@/lib/http';

/** The bridge's instruments and how to read them; answers 304 when the bridge already has this version. */
export const GET = apiRoute(async (request) => {
  const bridge = await requireBridge(request);
  const config = await bridgeConfig(bridge);
  const etag = `"${config.version}"`;
  if (request.headers.get('if-none-match') === etag) return new Response(null, { status: 304, headers: { etag } });
  return json(config, { headers: { etag, 'cache-control': 'no-store' } });
});
