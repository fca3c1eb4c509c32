import { requireActor } from '@/lib/auth/guards';
import { apiRoute, readQuery } from '@/lib/http';
import { reportData } from '@/lib/reports/data';
import { renderReportPdf } from '@/lib/reports/pdf';
import { reportFileName } from '@/lib/reports/send';
import { idParam } from '@/lib/validation/api';
import { reportQuery } from '@/lib/validation/reports';

type Ctx = { params: Promise<{ patientId: string }> };

/** The result report of one visit (default: the latest) as a PDF download. */
export const GET = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'readResults');
  const patientId = idParam.parse((await params).patientId);
  const { visit } = readQuery(request, reportQuery);
  const data = await reportData(actor, patientId, visit);
  const pdf = await renderReportPdf(data);
  return new Response(new Uint8Array(pdf), {
    headers: {
      'content-type': 'application/pdf',
      'content-disposition': `attachment; filename="${reportFileName(data)}"`,
      'cache-control': 'no-store',
    },
  });
});
