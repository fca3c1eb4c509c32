import { fhirJson, fhirRoute, metadata } from '@/lib/fhir/api';

/** The CapabilityStatement, without a token (FHIR R4 http.html#capabilities). */
export const GET = fhirRoute(async (request) => fhirJson(await metadata(request)));
