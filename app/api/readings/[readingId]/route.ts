import { z } from 'zod';
import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readQuery } from '@/lib/http';
import { getReading } from '@/lib/readings/queries';
import { idParam } from '@/lib/validation/api';

type Ctx = { params: Promise<{ readingId: string }> };

/** `?patientId=`: the history as seen from that patient's chart (other patients' comments left out). */
const readingQuery = z.object({ patientId: idParam.optional() });

export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const readingId = idParam.parse((await params).readingId);
  const { patientId } = readQuery(request, readingQuery);
  return json({ reading: await getReading(actor, readingId, patientId ? { patientId } : undefined) });
});
