import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { startPanel } from '@/lib/orders';
import { newPanelSchema } from '@/lib/validation/clinical';

/** A reader's whole panel on one sample, in one request and one transaction: all tests start or none. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'assignReadings');
  const input = await readJson(request, newPanelSchema);
  return json({ orders: await startPanel(actor, input) }, { status: 201 });
});
