'use client';
import useSWR from 'swr';
import { Notice } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import { Panel, td, th } from './panel';

type Who = { orderId: string; patientName: string; recordNumber: string } | null;
type Report = {
  days: number;
  readings: number;
  confident: number;
  confidentKept: number;
  askedToChoose: number;
  top1: number;
  notKept: { readingId: string; arrivedAt: string; suggested: Who; probability: number; kept: Who }[];
};

const pct = (n: number, d: number) => (d ? `${((100 * n) / d).toFixed(1)} %` : '–');
const name = (w: Who) => (w ? `${w.patientName} (${w.recordNumber})` : 'no running test (put on a patient directly, or left waiting)');

/** How the matcher did on this clinic's own readings: replayed as Intake saw them, against what was kept. */
export function MatchingReportPanel() {
  const { data, error } = useSWR<{ report: Report }>('/api/admin/matching-report', fetcher);
  const r = data?.report;
  return (
    <Panel
      id="matching-report"
      title="Matching report"
      intro="The last 30 days of readings replayed through the match suggestions as Intake saw them, against what the technicians finally kept."
    >
      {error && <Notice tone="error">Could not load the report: {error.message}</Notice>}
      {!r && !error && <p className="text-sm text-ink-500">Replaying…</p>}
      {r && (
        <>
          <dl className="mb-4 grid grid-cols-2 gap-3 text-sm sm:grid-cols-4" data-testid="matching-summary">
            <div>
              <dt className="text-ink-700">Readings</dt>
              <dd className="text-lg font-semibold">{r.readings}</dd>
            </div>
            <div>
              <dt className="text-ink-700">Confident suggestion kept</dt>
              <dd className="text-lg font-semibold">
                {r.confidentKept} of {r.confident} ({pct(r.confidentKept, r.confident)})
              </dd>
            </div>
            <div>
              <dt className="text-ink-700">Asked to choose</dt>
              <dd className="text-lg font-semibold">{pct(r.askedToChoose, r.readings)}</dd>
            </div>
            <div>
              <dt className="text-ink-700">Best guess kept</dt>
              <dd className="text-lg font-semibold">{pct(r.top1, r.readings)}</dd>
            </div>
          </dl>
          {r.notKept.length === 0 ? (
            <p className="text-sm text-ink-700">Every confident suggestion was the one kept.</p>
          ) : (
            <div className="relative overflow-x-auto">
              <table className="min-w-full divide-y divide-ink-100 text-sm" aria-label="Confident suggestions not kept">
                <thead>
                  <tr>
                    <th scope="col" className={th}>Arrived</th>
                    <th scope="col" className={th}>Suggested (confident)</th>
                    <th scope="col" className={th}>Kept</th>
                  </tr>
                </thead>
                <tbody className="divide-y divide-ink-100">
                  {r.notKept.map((c) => (
                    <tr key={c.readingId} data-reading-id={c.readingId}>
                      <td className={td}>{formatDateTime(c.arrivedAt)}</td>
                      <td className={td}>
                        {name(c.suggested)} · {(c.probability * 100).toFixed(1)} %
                      </td>
                      <td className={td}>{name(c.kept)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </>
      )}
    </Panel>
  );
}
