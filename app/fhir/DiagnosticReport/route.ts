import { answer, fhirRoute, requireIntegration, searchReports } from '@/lib/fhir/api';

export const GET = fhirRoute(async (request) => {
  const integration = await requireIntegration(request);
  return answer(request, 'DiagnosticReport', await searchReports(integration, request));
});
