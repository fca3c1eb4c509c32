import { requireActor } from '@/lib/auth/guards';
import { createBridge, listBridges } from '@/lib/devices';
import { apiRoute, json, readJson } from '@/lib/http';
import { newBridgeSchema } from '@/lib/validation/api';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ bridges: await listBridges(actor) });
});

/** The token is in this response only; it is stored hashed. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const { name } = await readJson(request, newBridgeSchema);
  return json(await createBridge(actor, name), { status: 201, headers: { 'Cache-Control': 'no-store' } });
});
