'use client';
// Results that left this record stay visible, struck through, with who took them off, when and why,
// and the comments and sign-off written while they were here.
import useSWR from 'swr';
import { Notice } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime, formatValue } from '@/lib/format';
import type { TakenOffResult } from '@/lib/readings/history';

type Json<T> = T extends Date ? string : T extends (infer U)[] ? Json<U>[] : T extends object ? { [K in keyof T]: Json<T[K]> } : T;
type Row = Json<TakenOffResult>;

function outcome(r: Row) {
  if (r.outcome === 'voided') return 'Voided';
  if (r.outcome === 'moved') return `Moved to another patient (${r.nowPatientRecordNumber})`;
  return 'Taken off, back in Intake';
}

export function TakenOffResults({ patientId }: { patientId: string }) {
  const { data, error } = useSWR<{ takenOff: Row[] }>(`/api/patients/${patientId}/history`, fetcher);
  if (error) return <Notice tone="error">Could not load results taken off this record: {error.message}</Notice>;
  if (!data?.takenOff.length) return null;
  return (
    <section aria-labelledby="taken-off-heading" className="mt-6 space-y-2">
      <h2 id="taken-off-heading" className="text-base font-semibold">
        Taken off this record
      </h2>
      <p className="text-xs text-ink-500">Kept for the record; not part of the results or trends above.</p>
      <ul className="divide-y divide-ink-100 rounded-lg border border-ink-100 bg-white text-sm shadow-sm" data-testid="taken-off-results">
        {data.takenOff.map((r) => (
          <li key={r.assignmentId} className="space-y-1 px-4 py-3" data-reading-id={r.readingId}>
            <div className="flex flex-wrap items-baseline gap-x-3 gap-y-1">
              <span className="text-ink-500 line-through decoration-alarm-700 decoration-2">
                <span className="font-medium">{r.analyte}</span> <span className="font-mono">{formatValue(r)}</span> ·{' '}
                {formatDateTime(r.measuredAt ?? r.receivedAt)} · {r.instrumentName ?? r.instrumentCode}
              </span>
              <span className="sr-only">(struck through: no longer on this record)</span>
            </div>
            <p className="text-xs">
              <span className="font-semibold">{outcome(r)}</span> by {r.endedByName ?? 'unknown'}, {formatDateTime(r.endedAt)}
              {r.endReason && <> — reason: “{r.endReason}”</>}
            </p>
            {(r.reviewed || r.comments.length > 0) && (
              <p className="text-xs text-ink-700">
                While on this record:{' '}
                {r.reviewed && `signed off by ${r.reviewed.by} (${formatDateTime(r.reviewed.at)})`}
                {r.reviewed && r.comments.length > 0 && '; '}
                {r.comments.map((m, i) => (
                  <span key={i}>
                    {i > 0 && '; '}“{m.comment}” — {m.by}
                  </span>
                ))}
              </p>
            )}
          </li>
        ))}
      </ul>
    </section>
  );
}
