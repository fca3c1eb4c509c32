import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { patientVisits } from '@/lib/reports/data';
import { patientReports, sendReport } from '@/lib/reports/send';
import { idParam } from '@/lib/validation/api';
import { sendReportSchema } from '@/lib/validation/reports';

type Ctx = { params: Promise<{ patientId: string }> };

/** The patient's visits (with how many results are signed off) and the reports sent, with delivery state. */
export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  const [visits, reports] = await Promise.all([patientVisits(actor, patientId), patientReports(actor, patientId)]);
  return json({ visits, reports });
});

/** A veterinarian sends a reviewed visit's report by e-mail (queued; the PDF attached). */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'reviewResults');
  const patientId = idParam.parse((await params).patientId);
  const input = await readJson(request, sendReportSchema);
  return json(await sendReport(actor, patientId, input), { status: 201 });
});
