import { answer, fhirRoute, requireIntegration, searchObservations } from '@/lib/fhir/api';

export const GET = fhirRoute(async (request) => {
  const integration = await requireIntegration(request);
  return answer(request, 'Observation', await searchObservations(integration, request));
});
