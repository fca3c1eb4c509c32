import { answer, fhirRoute, requireIntegration, searchPatients } from '@/lib/fhir/api';

export const GET = fhirRoute(async (request) => {
  const integration = await requireIntegration(request);
  return answer(request, 'Patient', await searchPatients(integration, request));
});
