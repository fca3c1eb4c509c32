'use client';
import dynamic from 'next/dynamic';
import { Fragment, useState } from 'react';
import useSWR, { useSWRConfig } from 'swr';
import { Notice, buttonClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { CHART_PAGE } from '@/lib/clinical/chart-page';
import type { patientChart } from '@/lib/clinical/chart';
import { FLAG_CODE } from '@/lib/clinical/flags';
import { QualityMarks } from '@/app/components/quality-marks';
import { formatMeasured, formatDateTime } from '@/lib/format';
import { ResultDetail } from './result-detail';
import { QualitativeTimeline } from './qualitative-timeline';

// The chart library is loaded only when a chart is drawn (a record with results), not with the page.
const TrendChart = dynamic(() => import('./trend-chart').then((m) => m.TrendChart), {
  ssr: false,
  loading: () => <div className="h-56 rounded-lg border border-ink-100 bg-white shadow-sm" aria-busy="true" aria-label="Loading the trend chart" />,
});

type Chart = Awaited<ReturnType<typeof patientChart>>;
type Json<T> = T extends Date ? string : T extends (infer U)[] ? Json<U>[] : T extends object ? { [K in keyof T]: Json<T[K]> } : T;
export type ChartResult = Json<Chart['results'][number]>;
export type ChartAnalyte = Json<Chart['analytes'][string]>;
export type TrendPoint = Json<Chart['trend'][number]>;

const flagClass: Record<string, string> = {
  'critical-low': 'bg-alarm-700 text-white',
  'critical-high': 'bg-alarm-700 text-white',
  low: 'bg-alarm-100 text-alarm-700',
  high: 'bg-alarm-100 text-alarm-700',
  normal: 'text-moss-700',
};

/** The analyzer's own flag, shown beside ours (or alone when we have no interval), never hidden. */
function AnalyzerFlag({ result }: { result: ChartResult }) {
  const a = result.clinical.analyzerFlag;
  if (!a) return null;
  return (
    <span
      className={`ml-1 inline-block rounded px-1.5 py-0.5 text-xs font-semibold ${a.abnormal ? 'bg-alarm-100 text-alarm-700' : 'text-moss-700'}`}
      title={a.text}
      data-testid="analyzer-flag"
    >
      analyzer: {a.codes.join(', ')}
      <span className="sr-only"> {a.text}</span>
    </span>
  );
}

export function FlagBadge({ result }: { result: ChartResult }) {
  const f = result.clinical.flag;
  const q = result.clinical.qualitative;
  if (q) {
    const label = q.abnormal === null ? 'not interpreted' : q.abnormal ? 'Abnormal' : 'Normal';
    return (
      <>
        <span
          className={`inline-block rounded px-1.5 py-0.5 text-xs font-semibold ${q.abnormal ? 'bg-alarm-100 text-alarm-700' : q.abnormal === false ? 'text-moss-700' : 'text-ink-500'}`}
          title={q.basis}
          data-testid="result-flag"
          data-flag={q.abnormal === null ? 'none' : q.abnormal ? 'abnormal' : 'normal'}
        >
          {label}
          <span className="sr-only"> {q.basis}</span>
        </span>
      </>
    );
  }
  if (!f) {
    if (result.clinical.analyzerFlag) return <AnalyzerFlag result={result} />;
    return <span className="text-xs text-ink-500">{result.clinical.problems[0] ? 'not flagged' : '—'}</span>;
  }
  return (
    <>
    <span
      className={`inline-block rounded px-1.5 py-0.5 text-xs font-semibold ${flagClass[f.flag]}`}
      title={`${f.text}${result.clinical.interval?.origin === 'analyzer' ? ' (interval from the analyzer)' : ''}`}
      data-testid="result-flag"
      data-flag={f.flag}
    >
      {FLAG_CODE[f.flag]}
      {!f.certain && '?'}
      <span className="sr-only"> {f.text}</span>
    </span>
    <AnalyzerFlag result={result} />
    </>
  );
}

export function PatientResults({ patientId, patientName }: { patientId: string; patientName?: string }) {
  // The live feed revalidates this key whenever a result on this patient changes.
  // The newest results come whole, a page at a time; the trend has a point for every result.
  const [limit, setLimit] = useState(CHART_PAGE);
  const { data, error, mutate, isLoading } = useSWR<Json<Chart>>(`/api/patients/${patientId}/results?limit=${limit}`, fetcher, { keepPreviousData: true });
  const { mutate: revalidate } = useSWRConfig();
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
                {a.qualitative ? <QualitativeTimeline analyte={a} trend={data.trend} /> : <TrendChart analyte={a} trend={data.trend} />}
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
                          {r.clinical.qualitative ? r.clinical.qualitative.label : formatMeasured(r.clinical.display, a?.decimals ?? 1)}
                          {r.clinical.band && (
                            <span className="block font-sans text-xs font-normal text-ink-700" data-testid="result-band">
                              {r.clinical.band.label}
                              {r.clinical.interval?.origin === 'analyzer' && <span className="text-ink-500"> · interval from the analyzer</span>}
                            </span>
                          )}
                          {r.clinical.typedInBy && (
                            <span className="block font-sans text-xs font-normal text-signal-600" data-testid="typed-in">
                              typed in by {r.clinical.typedInBy}
                            </span>
                          )}
                          {r.clinical.unitNote && <span className="block font-sans text-[11px] font-normal text-ink-500" data-testid="unit-note">{r.clinical.unitNote}</span>}
                          {r.notes.length > 0 && (
                            <span className="block max-w-xs whitespace-normal font-sans text-xs font-normal text-ink-700" data-testid="result-notes">
                              Note: {r.notes.join(' · ')}
                            </span>
                          )}
                        </td>
                        <td data-label="Flag" className="px-4 py-2">
                          <FlagBadge result={r} />
                          {r.clinical.delta && (
                            <span className="ml-1 inline-block rounded bg-signal-100 px-1.5 py-0.5 text-xs font-semibold text-signal-600" title={r.clinical.delta.text} data-testid="delta-flag">
                              Large change
                              <span className="sr-only"> {r.clinical.delta.text}</span>
                            </span>
                          )}
                          <QualityMarks marks={r.quality} />
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
                            <ResultDetail
                              result={r}
                              analyte={a}
                              patientId={patientId}
                              patientName={patientName ?? ''}
                              panel={r.specimenId ? data.results.filter((x) => x.specimenId === r.specimenId) : [r]}
                              onMoved={() => {
                                // Refetch now rather than on the live event, so the moved result never lingers here.
                                setOpen(null);
                                void mutate();
                                void revalidate(`/api/patients/${patientId}/history`);
                              }}
                            />
                          </td>
                        </tr>
                      )}
                    </Fragment>
                  );
                })}
              </tbody>
            </table>
          </div>
          {data.total > data.results.length && (
            <div className="flex flex-wrap items-center gap-3 text-sm">
              <span className="text-ink-700" data-testid="results-shown">
                Newest {data.results.length} of {data.total} results shown.
              </span>
              {/* Not disabled while loading: a disabled button would drop the keyboard focus. */}
              <button type="button" className={buttonClass.secondary} aria-busy={isLoading} onClick={() => setLimit(data.results.length + CHART_PAGE)}>
                Show {Math.min(CHART_PAGE, data.total - data.results.length)} older results
              </button>
            </div>
          )}
        </>
      )}
    </section>
  );
}
