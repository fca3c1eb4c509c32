'use client';
import { Fragment, useState } from 'react';
import useSWR from 'swr';
import { Notice } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import type { patientChart } from '@/lib/clinical/chart';
import { formatMeasured } from '@/lib/clinical/evaluate';
import { FLAG_CODE } from '@/lib/clinical/flags';
import { formatDateTime } from '@/lib/format';
import { ResultDetail } from './result-detail';
import { TrendChart } from './trend-chart';

type Chart = Awaited<ReturnType<typeof patientChart>>;
type Json<T> = T extends Date ? string : T extends (infer U)[] ? Json<U>[] : T extends object ? { [K in keyof T]: Json<T[K]> } : T;
export type ChartResult = Json<Chart['results'][number]>;
export type ChartAnalyte = Json<Chart['analytes'][string]>;

const flagClass: Record<string, string> = {
  'critical-low': 'bg-alarm-700 text-white',
  'critical-high': 'bg-alarm-700 text-white',
  low: 'bg-alarm-100 text-alarm-700',
  high: 'bg-alarm-100 text-alarm-700',
  normal: 'text-moss-700',
};

export function FlagBadge({ result }: { result: ChartResult }) {
  const f = result.clinical.flag;
  if (!f) return <span className="text-xs text-ink-500">{result.clinical.problems[0] ? 'not flagged' : '—'}</span>;
  return (
    <span
      className={`inline-block rounded px-1.5 py-0.5 text-xs font-semibold ${flagClass[f.flag]}`}
      title={f.text}
      data-testid="result-flag"
      data-flag={f.flag}
    >
      {FLAG_CODE[f.flag]}
      {!f.certain && '?'}
      <span className="sr-only"> {f.text}</span>
    </span>
  );
}

export function PatientResults({ patientId, patientName }: { patientId: string; patientName?: string }) {
  // The live feed revalidates this key whenever a result on this patient changes.
  const { data, error } = useSWR<{ results: ChartResult[]; analytes: Record<string, ChartAnalyte> }>(`/api/patients/${patientId}/results`, fetcher);
  const [open, setOpen] = useState<string | null>(null);
  const analytes = Object.values(data?.analytes ?? {});
  return (
    <section aria-labelledby="results-heading" className="space-y-4">
      <h2 id="results-heading" className="text-lg font-semibold">
        Results
      </h2>
      {error && <Notice tone="error">Could not load results: {error.message}</Notice>}
      {data && data.results.length === 0 && <p className="text-sm text-ink-500">No results on this record yet.</p>}
      {data && data.results.length > 0 && (
        <>
          <div className={`grid gap-4 ${analytes.length > 1 ? 'lg:grid-cols-2' : ''}`}>
            {analytes.map((a) => (
              <div key={a.code}>
                <TrendChart analyte={a} results={data.results} />
                {a.interval && <p className="mt-1 text-[11px] leading-snug text-ink-500">Interval source: {a.interval.source}</p>}
                {a.speciesNote && <p className="mt-1 text-[11px] leading-snug text-ink-500">{a.speciesNote}</p>}
              </div>
            ))}
          </div>
          {/* relative: keeps the visually hidden heading inside this box (absolutely placed, it would widen the page) */}
          <div className="relative overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
            <table className="cards-on-phone min-w-full divide-y divide-ink-100 text-sm" data-testid="patient-results">
              <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
                <tr>
                  <th scope="col" className="px-4 py-2">Measured</th>
                  <th scope="col" className="px-4 py-2">Test</th>
                  <th scope="col" className="px-4 py-2">Result</th>
                  <th scope="col" className="px-4 py-2">Flag</th>
                  <th scope="col" className="px-4 py-2">Change from previous</th>
                  <th scope="col" className="px-4 py-2">Review</th>
                  <th scope="col" className="px-4 py-2">Instrument</th>
                  <th scope="col" className="px-4 py-2"><span className="sr-only">Details</span></th>
                </tr>
              </thead>
              <tbody className="divide-y divide-ink-100">
                {data.results.map((r) => {
                  const a = data.analytes[r.analyte];
                  return (
                    <Fragment key={r.id}>
                      <tr data-reading-id={r.id} className={r.clinical.alert && !r.clinical.alert.acknowledged ? 'bg-alarm-100/50' : undefined}>
                        <td data-label="Measured" className="whitespace-nowrap px-4 py-2">{formatDateTime(r.measuredAt ?? r.receivedAt)}</td>
                        <td data-label="Test" className="px-4 py-2 font-medium">{r.analyte}</td>
                        <td data-label="Result" className="whitespace-nowrap px-4 py-2 font-mono font-semibold" data-testid="result-value">
                          {formatMeasured(r.clinical.display, a?.decimals ?? 1)}
                          {r.clinical.band && <span className="block font-sans text-xs font-normal text-ink-700">{r.clinical.band.label}</span>}
                        </td>
                        <td data-label="Flag" className="px-4 py-2">
                          <FlagBadge result={r} />
                          {r.clinical.delta && (
                            <span className="ml-1 inline-block rounded bg-signal-100 px-1.5 py-0.5 text-xs font-semibold text-signal-600" title={r.clinical.delta.text} data-testid="delta-flag">
                              Check identity
                            </span>
                          )}
                        </td>
                        <td data-label="Change from previous" className="whitespace-nowrap px-4 py-2 font-mono text-xs" data-testid="result-change">
                          {r.clinical.change?.text ?? '—'}
                        </td>
                        <td data-label="Review" className="px-4 py-2 text-xs">
                          {r.clinical.reviewed ? (
                            <span className="text-moss-700">Reviewed by {r.clinical.reviewed.by}</span>
                          ) : (
                            <span className="font-semibold text-signal-600">Not reviewed</span>
                          )}
                          {r.clinical.comments.length > 0 && <span className="block text-ink-500">{r.clinical.comments.length} comment(s)</span>}
                        </td>
                        <td data-label="Instrument" className="px-4 py-2">{r.instrumentName ?? r.instrumentCode}</td>
                        <td className="px-4 py-2 text-right">
                          <button
                            type="button"
                            className="text-sm font-medium text-ink-700 underline-offset-2 hover:underline"
                            aria-expanded={open === r.id}
                            onClick={() => setOpen(open === r.id ? null : r.id)}
                          >
                            {open === r.id ? 'Close' : 'Details'}
                          </button>
                        </td>
                      </tr>
                      {open === r.id && (
                        <tr>
                          <td colSpan={8} className="bg-paper px-4 py-3">
                            <ResultDetail result={r} analyte={a} patientId={patientId} patientName={patientName ?? ''} onMoved={() => setOpen(null)} />
                          </td>
                        </tr>
                      )}
                    </Fragment>
                  );
                })}
              </tbody>
            </table>
          </div>
        </>
      )}
    </section>
  );
}
