import { requireActor } from '@/lib/auth/guards';
import { auditActions, listAuditEvents } from '@/lib/audit';
import { apiRoute, json, readQuery } from '@/lib/http';
import { auditQuery } from '@/lib/validation/api';

/** The clinic's append-only audit trail, newest first, filtered; administrators only. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const filter = readQuery(request, auditQuery);
  const [page, actions] = await Promise.all([listAuditEvents(actor.clinicId, filter), auditActions(actor.clinicId)]);
  return json({ ...page, actions });
});
