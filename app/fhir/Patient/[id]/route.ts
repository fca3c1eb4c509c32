import { answer, fhirRoute, requireIntegration, resourceId, searchPatients } from '@/lib/fhir/api';

type Ctx = { params: Promise<{ id: string }> };

export const GET = fhirRoute<Ctx>(async (request, { params }) => {
  const integration = await requireIntegration(request);
  const id = resourceId((await params).id);
  return answer(request, 'Patient', await searchPatients(integration, request, id), true);
});
