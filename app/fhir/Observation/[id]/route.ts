import { answer, fhirRoute, requireIntegration, resourceId, searchObservations } from '@/lib/fhir/api';

type Ctx = { params: Promise<{ id: string }> };

export const GET = fhirRoute<Ctx>(async (request, { params }) => {
  const integration = await requireIntegration(request);
  const id = resourceId((await params).id);
  return answer(request, 'Observation', await searchObservations(integration, request, id), true);
});
