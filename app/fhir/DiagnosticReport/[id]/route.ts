import { answer, fhirRoute, requireIntegration, resourceId, searchReports } from '@/lib/fhir/api';

type Ctx = { params: Promise<{ id: string }> };

export const GET = fhirRoute<Ctx>(async (request, { params }) => {
  const integration = await requireIntegration(request);
  const id = resourceId((await params).id);
  return answer(request, 'DiagnosticReport', await searchReports(integration, request, id), true);
});
