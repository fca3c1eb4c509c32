'use client';
import { useEffect, useRef, useState } from 'react';
import useSWR from 'swr';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime, formatValue, instrumentFlagsText, timeAgo } from '@/lib/format';
import type { ReadingView } from '@/lib/readings/queries';
import { Notice, buttonClass } from '@/app/components/ui';
import type { Suggestion } from '@/lib/clinical/matching';
import { AssignDialog } from './assign-dialog';
import { UnparsedCaptures } from './unparsed-captures';
import { SuggestedMatch } from './suggested-match';
import { VoidDialog } from './void-dialog';
import { MarkControlButton } from './mark-control';
import { QualityMarks } from '@/app/components/quality-marks';
import { markViews } from '@/lib/quality/labels';

type Serialized<T> = { [K in keyof T]: T[K] extends Date ? string : T[K] extends Date | null ? string | null : T[K] };
export type IntakeReading = Serialized<ReadingView>;

/** Remembers which ids were already on screen, so rows that arrive later can be marked as new. */
function useArrivals(ids: string[] | undefined) {
  const seen = useRef<Set<string> | null>(null);
  const [fresh, setFresh] = useState<Set<string>>(new Set());
  useEffect(() => {
    if (!ids) return;
    if (seen.current === null) {
      seen.current = new Set(ids);
      return;
    }
    const added = ids.filter((id) => !seen.current!.has(id));
    added.forEach((id) => seen.current!.add(id));
    if (added.length) setFresh((prev) => new Set([...prev, ...added]));
  }, [ids]);
  return fresh;
}

/** After a dialog closes, focus goes back to the reading's row (or the next row, once it was assigned). */
function returnFocus(readingId: string) {
  const rows = [...document.querySelectorAll<HTMLTableRowElement>('tr[data-reading-id]')];
  const index = rows.findIndex((row) => row.dataset.readingId === readingId);
  const row = rows[index];
  const target = row?.querySelector<HTMLButtonElement>('button[data-action=assign]');
  requestAnimationFrame(() => {
    if (target?.isConnected) return target.focus();
    const next = rows.slice(index + 1).find((r) => r.isConnected) ?? rows.slice(0, Math.max(0, index)).reverse().find((r) => r.isConnected);
    (next?.querySelector<HTMLButtonElement>('button[data-action=assign]') ?? document.getElementById('unassigned-heading'))?.focus();
  });
}

export function IntakeBoard() {
  const readings = useSWR<{ readings: IntakeReading[] }>('/api/readings?status=unassigned', fetcher, {
    refreshInterval: 60_000,
  });
  // Suggestions live under /api/readings, so every reading and order event refreshes them.
  const suggestions = useSWR<{ suggestions: Record<string, Suggestion> }>('/api/readings/suggestions', fetcher, {
    refreshInterval: 60_000,
  });
  const [assigning, setAssigning] = useState<IntakeReading | null>(null);
  const [voiding, setVoiding] = useState<IntakeReading | null>(null);
  const [done, setDone] = useState<string | null>(null);
  const fresh = useArrivals(readings.data?.readings.map((r) => r.id));
  // Re-render every 30 s so "3 min ago" stays true.
  const [, tick] = useState(0);
  useEffect(() => {
    const timer = setInterval(() => tick((n) => n + 1), 30_000);
    return () => clearInterval(timer);
  }, []);

  const list = readings.data?.readings ?? [];

  return (
    <div className="space-y-8">
      {done && <Notice tone="ok">{done}</Notice>}
      <section aria-labelledby="unassigned-heading">
        <h2 id="unassigned-heading" tabIndex={-1} className="mb-3 flex items-center gap-2 text-lg font-semibold text-ink-900">
          Unassigned readings
          <span className="rounded-full bg-ink-100 px-2 py-0.5 text-xs font-semibold text-ink-700" data-testid="unassigned-count">
            {readings.data ? list.length : '…'}
          </span>
        </h2>
        {readings.error && <Notice tone="error">Could not load readings: {readings.error.message}</Notice>}
        {readings.data && list.length === 0 && (
          <p className="rounded-lg border border-dashed border-ink-300 bg-white/60 px-4 py-8 text-center text-sm text-ink-700">
            Nothing waiting. New readings appear here as soon as the analyzer prints them.
          </p>
        )}
        {list.length > 0 && (
          <div className="overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
            <table className="min-w-full divide-y divide-ink-100 text-sm">
              <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
                <tr>
                  <th scope="col" className="px-4 py-2">Arrived</th>
                  <th scope="col" className="px-4 py-2">Instrument</th>
                  <th scope="col" className="px-4 py-2">Test</th>
                  <th scope="col" className="px-4 py-2">Result</th>
                  <th scope="col" className="px-4 py-2">Sample / patient ID</th>
                  <th scope="col" className="px-4 py-2">Measured</th>
                  <th scope="col" className="px-4 py-2">Suggested match</th>
                  <th scope="col" className="px-4 py-2"><span className="sr-only">Actions</span></th>
                </tr>
              </thead>
              <tbody className="divide-y divide-ink-100">
                {list.map((r) => (
                  <tr key={r.id} data-reading-id={r.id} className={fresh.has(r.id) ? 'animate-arrive' : undefined}>
                    <td className="whitespace-nowrap px-4 py-3 text-ink-700" title={formatDateTime(r.receivedAt)}>
                      {timeAgo(r.receivedAt)}
                      {fresh.has(r.id) && (
                        <span className="ml-2 rounded bg-signal-500 px-1.5 py-0.5 text-[10px] font-bold uppercase text-white">new</span>
                      )}
                    </td>
                    <td className="px-4 py-3">
                      {r.instrumentName ?? <span className="text-ink-500">{r.instrumentCode} (not configured)</span>}
                    </td>
                    <td className="px-4 py-3 font-medium">{r.analyte}</td>
                    <td className="px-4 py-3" data-critical={r.critical ? (r.critical.certain ? 'yes' : 'possible') : undefined}>
                      <span className="whitespace-nowrap font-mono text-base font-semibold" data-testid="reading-value">
                        {formatValue(r)}
                      </span>
                      <QualityMarks marks={markViews(r.qualityMarks)} />
                      {instrumentFlagsText(r.flags) && (
                        <span className="ml-2 rounded bg-alarm-100 px-1.5 py-0.5 font-sans text-xs font-semibold text-alarm-700" data-testid="analyzer-flag" title="Flag sent by the analyzer">
                          {instrumentFlagsText(r.flags)}
                        </span>
                      )}
                      {r.instrumentRange && <span className="block font-sans text-xs font-normal text-ink-500">analyzer range {r.instrumentRange}</span>}
                      {r.enteredByName && <span className="block font-sans text-xs font-normal text-signal-600">typed in by {r.enteredByName}</span>}
                      {r.notes.length > 0 && <span className="block max-w-xs whitespace-normal font-sans text-xs font-normal text-ink-700">Note: {r.notes.join(' · ')}</span>}
                      {r.critical && (
                        <p className="mt-1 max-w-56 rounded bg-alarm-100 px-1.5 py-0.5 text-xs font-semibold text-alarm-700" data-testid="critical-before-assignment" role="note">
                          {r.critical.text}
                        </p>
                      )}
                    </td>
                    <td className="px-4 py-3">
                      {r.sampleId || r.patientRef ? (
                        <span className="font-mono">{[r.sampleId, r.patientRef].filter(Boolean).join(' / ')}</span>
                      ) : (
                        <span className="text-ink-500">none printed</span>
                      )}
                    </td>
                    <td className="whitespace-nowrap px-4 py-3 text-ink-700">{formatDateTime(r.measuredAt)}</td>
                    <td className="px-4 py-3 align-top">
                      <SuggestedMatch
                        readingId={r.id}
                        analyte={r.analyte}
                        suggestion={suggestions.data?.suggestions[r.id]}
                        onAssigned={(message) => {
                          setDone(message);
                          void readings.mutate();
                          void suggestions.mutate();
                        }}
                      />
                    </td>
                    <td className="whitespace-nowrap px-4 py-3 text-right">
                      <div className="flex justify-end gap-2">
                        <button type="button" className={buttonClass.primary} data-action="assign" onClick={() => setAssigning(r)}>
                          Assign…
                        </button>
                        <button type="button" className={buttonClass.secondary} onClick={() => setVoiding(r)}>
                          Void…
                        </button>
                        <MarkControlButton
                          readingId={r.id}
                          onDone={(message) => {
                            setDone(message);
                            void readings.mutate();
                          }}
                        />
                      </div>
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </section>

      <UnparsedCaptures onDone={setDone} />

      {assigning && (
        <AssignDialog
          reading={assigning}
          onClose={(message) => {
            const readingId = assigning.id;
            setAssigning(null);
            if (message) setDone(message);
            void readings.mutate();
            void suggestions.mutate();
            returnFocus(readingId);
          }}
        />
      )}
      {voiding && (
        <VoidDialog
          reading={voiding}
          onClose={(message) => {
            setVoiding(null);
            if (message) setDone(message);
            void readings.mutate();
          }}
        />
      )}
    </div>
  );
}
