import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json } from '@/lib/http';
import { revokeIntegrationToken } from '@/lib/integrations';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ integrationId: string }> };

export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const id = idParam.parse((await params).integrationId);
  return json({ integration: await revokeIntegrationToken(actor, id) });
});
