'use client';
// A coded or text result over time (positive / negative, a morphology comment): a list of values in
// time order with their interpretation, not a line plot, since such values have no distance between them.
import { formatDateTime } from '@/lib/format';
import type { ChartAnalyte, TrendPoint } from './patient-results';

export function QualitativeTimeline({ analyte, trend }: { analyte: ChartAnalyte; trend: TrendPoint[] }) {
  const rows = trend.filter((r) => r.analyte === analyte.code && r.qualitative).sort((a, b) => new Date(a.at).getTime() - new Date(b.at).getTime());
  if (rows.length === 0) return null;
  return (
    <figure className="rounded-lg border border-ink-100 bg-white p-3 shadow-sm" data-testid="qualitative-timeline" data-analyte={analyte.code}>
      <figcaption className="mb-2 text-sm font-semibold">{analyte.name}</figcaption>
      <ol className="space-y-1 border-l-2 border-ink-100 pl-3 text-sm">
        {rows.map((r) => {
          const q = r.qualitative!;
          return (
            <li key={r.id} className="flex flex-wrap items-baseline gap-x-2" data-reading-id={r.id}>
              <span className="text-xs text-ink-500">{formatDateTime(r.at)}</span>
              <span className={`font-semibold ${q.abnormal ? 'text-alarm-700' : ''}`}>{q.label}</span>
              <span className="text-xs text-ink-700" title={q.basis}>
                {q.abnormal === null ? 'not interpreted' : q.abnormal ? 'abnormal' : 'normal'}
              </span>
            </li>
          );
        })}
      </ol>
    </figure>
  );
}
