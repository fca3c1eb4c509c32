import { requireActor } from '@/lib/auth/guards';
import { apiRoute, readQuery } from '@/lib/http';
import { exportResultsCsv } from '@/lib/reports/export';
import { exportQuery } from '@/lib/validation/reports';

/** Results as CSV (a date range and/or a patient), formula-like cells neutralised. */
export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'readResults');
  const query = readQuery(request, exportQuery);
  const { csv } = await exportResultsCsv(actor, query);
  const name = `results-${query.patientId ? 'patient' : 'clinic'}-${query.from ?? 'all'}-${query.to ?? 'all'}.csv`;
  return new Response(csv, {
    headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="${name}"`, 'cache-control': 'no-store' },
  });
});
