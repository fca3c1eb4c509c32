import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { issueIntegrationToken, listIntegrations } from '@/lib/integrations';

const issueSchema = z.object({ name: z.string().trim().min(2, 'Name the system that will use the token.').max(100) });

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ integrations: await listIntegrations(actor) });
});

export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const { name } = await readJson(request, issueSchema);
  return json({ integration: await issueIntegrationToken(actor, name) }, { status: 201 });
});
