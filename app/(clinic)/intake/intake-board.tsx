'use client';
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import useSWR from 'swr';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime, formatValue, instrumentFlagsText, timeAgo } from '@/lib/format';
import type { ReadingView, WaitingList } from '@/lib/readings/queries';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import type { Suggestion } from '@/lib/clinical/matching';
import { QualityMarks } from '@/app/components/quality-marks';
import { markViews } from '@/lib/quality/labels';
import { MarkControlButton } from './mark-control';
import { AssignDialog } from './assign-dialog';
import { UnparsedCaptures } from './unparsed-captures';
import { SuggestedMatch } from './suggested-match';
import { PanelSuggestion } from './panel-suggestion';
import { VoidDialog } from './void-dialog';
import { useLive } from '../live';

type Serialized<T> = { [K in keyof T]: T[K] extends Date ? string : T[K] extends Date | null ? string | null : T[K] };
export type IntakeReading = Serialized<ReadingView> & { decimals?: number | null };
type Waiting = Serialized<Omit<WaitingList, 'specimens' | 'waiting'>> & {
  waiting: { readings: number; specimens: number; oldestAt: string | null };
  specimens: IntakeSpecimen[];
};
export interface IntakeSpecimen {
  id: string;
  instrumentCode: string;
  instrumentName: string | null;
  sampleId: string | null;
  patientRef: string | null;
  receivedAt: string;
  readings: IntakeReading[];
}

const PAGE_SIZE = 25;
const AGE_CHOICES = [0, 5, 15, 30, 60];
const HIGHLIGHT_CHOICES = [5, 10, 15, 30, 60];
const HIGHLIGHT_KEY = 'benchwire.intake.highlightAfterMinutes';

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

const minutesSince = (iso: string, now: number) => Math.max(0, (now - new Date(iso).getTime()) / 60_000);

function waitedText(minutes: number) {
  if (minutes < 1) return 'under a minute';
  if (minutes < 90) return `${Math.round(minutes)} min`;
  const hours = minutes / 60;
  return hours < 48 ? `${hours.toFixed(1)} h` : `${Math.round(hours / 24)} days`;
}

export function IntakeBoard() {
  const [page, setPage] = useState(1);
  const [instrument, setInstrument] = useState('');
  const [analyte, setAnalyte] = useState('');
  const [olderThan, setOlderThan] = useState(0);
  const [highlightAfter, setHighlightAfter] = useState(15);
  useEffect(() => {
    const stored = Number(window.localStorage.getItem(HIGHLIGHT_KEY));
    // eslint-disable-next-line react-hooks/set-state-in-effect -- a saved preference is only readable after mount
    if (HIGHLIGHT_CHOICES.includes(stored)) setHighlightAfter(stored);
  }, []);
  const query = new URLSearchParams({ page: String(page), pageSize: String(PAGE_SIZE) });
  if (instrument) query.set('instrument', instrument);
  if (analyte) query.set('analyte', analyte);
  if (olderThan) query.set('olderThanMinutes', String(olderThan));
  // A burst of arrivals (a bridge batch is up to 200 readings) revalidates many times at once; once it has
  // settled, one fresh request under a new key makes sure the list and its count end up current.
  const [settled, setSettled] = useState(0);
  const { listen } = useLive();
  useEffect(() => {
    let timer: ReturnType<typeof setTimeout> | undefined;
    const stop = listen((event) => {
      if (!event.type.startsWith('reading.')) return;
      clearTimeout(timer);
      timer = setTimeout(() => setSettled((n) => n + 1), 400);
    });
    return () => {
      clearTimeout(timer);
      stop();
    };
  }, [listen]);
  query.set('v', String(settled));
  const list = useSWR<Waiting>(`/api/readings/waiting?${query}`, fetcher, { refreshInterval: 60_000, keepPreviousData: true });
  const specimens = useMemo(() => list.data?.specimens ?? [], [list.data]);
  // Suggestions for the readings on this page (every waiting reading is weighed on the server). They live
  // under /api/readings, so every reading and order event refreshes them.
  const shownReadings = specimens.flatMap((s) => s.readings.map((r) => r.id)).join(',');
  const suggestions = useSWR<{ suggestions: Record<string, Suggestion> }>(shownReadings ? `/api/readings/suggestions?readings=${shownReadings}` : null, fetcher, {
    refreshInterval: 60_000,
    keepPreviousData: true,
  });
  const [assigning, setAssigning] = useState<IntakeSpecimen | null>(null);
  const [voiding, setVoiding] = useState<IntakeSpecimen | null>(null);
  const [done, setDone] = useState<string | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const fresh = useArrivals(list.data ? specimens.map((s) => s.id) : undefined);
  const [now, setNow] = useState(() => Date.now());
  useEffect(() => {
    const timer = setInterval(() => setNow(Date.now()), 30_000);
    return () => clearInterval(timer);
  }, []);

  // Arrow keys move between rows; the row that had focus keeps it (or its neighbour, once it is assigned).
  const listRef = useRef<HTMLUListElement>(null);
  const focusIndex = useRef<number | null>(null);
  const cards = () => [...(listRef.current?.querySelectorAll<HTMLElement>('[data-specimen-id]') ?? [])];
  const onListKey = (e: React.KeyboardEvent) => {
    const all = cards();
    const current = all.findIndex((c) => c === e.target);
    if (current < 0) return;
    const next = e.key === 'ArrowDown' ? current + 1 : e.key === 'ArrowUp' ? current - 1 : e.key === 'Home' ? 0 : e.key === 'End' ? all.length - 1 : null;
    if (next !== null) {
      e.preventDefault();
      all[Math.max(0, Math.min(all.length - 1, next))]?.focus();
    } else if (e.key === 'Enter') {
      e.preventDefault();
      setAssigning(specimens[current]);
    }
  };
  useEffect(() => {
    if (focusIndex.current === null || document.activeElement !== document.body) return;
    const all = cards();
    if (all.length) all[Math.min(focusIndex.current, all.length - 1)].focus();
  }, [specimens]);

  const refresh = useCallback(() => {
    void list.mutate();
    void suggestions.mutate();
  }, [list, suggestions]);

  const split = async (readingId: string) => {
    setFailure(null);
    try {
      await send(`/api/readings/${readingId}/split`, 'POST', {});
      setDone('Reading split off its panel; it now has a row of its own.');
      refresh();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not split the reading off.');
    }
  };

  const waiting = list.data?.waiting;
  const matching = list.data?.matching;
  const pages = list.data?.pages ?? 1;
  const filtered = !!(instrument || analyte || olderThan);
  const firstShown = (page - 1) * PAGE_SIZE + 1;

  return (
    <div className="space-y-8">
      {done && <Notice tone="ok">{done}</Notice>}
      {failure && <Notice tone="error">{failure}</Notice>}
      <section aria-labelledby="unassigned-heading">
        <div className="mb-3 flex flex-wrap items-baseline justify-between gap-x-4 gap-y-1">
          <h2 id="unassigned-heading" className="flex items-center gap-2 text-lg font-semibold text-ink-900">
            Waiting readings
            <span className="rounded-full bg-ink-100 px-2 py-0.5 text-xs font-semibold text-ink-700" data-testid="unassigned-count">
              {waiting ? waiting.readings : '…'}
            </span>
          </h2>
          {waiting && waiting.readings > 0 && (
            <p className="text-sm text-ink-700" data-testid="waiting-summary">
              {waiting.readings} reading{waiting.readings === 1 ? '' : 's'} from {waiting.specimens} sample{waiting.specimens === 1 ? '' : 's'}
              {waiting.oldestAt && (
                <>
                  {' '}· oldest waiting <strong data-testid="oldest-waiting">{waitedText(minutesSince(waiting.oldestAt, now))}</strong>
                </>
              )}
            </p>
          )}
        </div>

        <form className="mb-3 grid grid-cols-2 gap-2 sm:grid-cols-4" aria-label="Filter waiting readings" onSubmit={(e) => e.preventDefault()}>
          <label className="text-xs font-medium text-ink-700">
            Instrument
            <select className={inputClass} value={instrument} onChange={(e) => (setInstrument(e.target.value), setPage(1))} data-testid="filter-instrument">
              <option value="">All instruments</option>
              {list.data?.facets.instruments.map((i) => (
                <option key={i.code} value={i.code}>
                  {i.name ?? i.code} ({i.count})
                </option>
              ))}
            </select>
          </label>
          <label className="text-xs font-medium text-ink-700">
            Test
            <select className={inputClass} value={analyte} onChange={(e) => (setAnalyte(e.target.value), setPage(1))} data-testid="filter-analyte">
              <option value="">All tests</option>
              {list.data?.facets.analytes.map((a) => (
                <option key={a.code} value={a.code}>
                  {a.code} ({a.count})
                </option>
              ))}
            </select>
          </label>
          <label className="text-xs font-medium text-ink-700">
            Waiting
            <select className={inputClass} value={olderThan} onChange={(e) => (setOlderThan(Number(e.target.value)), setPage(1))} data-testid="filter-age">
              {AGE_CHOICES.map((m) => (
                <option key={m} value={m}>
                  {m === 0 ? 'Any time' : `${m} min or more`}
                </option>
              ))}
            </select>
          </label>
          <label className="text-xs font-medium text-ink-700">
            Highlight after
            <select
              className={inputClass}
              value={highlightAfter}
              onChange={(e) => {
                setHighlightAfter(Number(e.target.value));
                window.localStorage.setItem(HIGHLIGHT_KEY, e.target.value);
              }}
            >
              {HIGHLIGHT_CHOICES.map((m) => (
                <option key={m} value={m}>
                  {m} min
                </option>
              ))}
            </select>
          </label>
        </form>

        {list.error && <Notice tone="error">Could not load readings: {list.error.message}</Notice>}
        {list.data && specimens.length === 0 && (
          <p className="rounded-lg border border-dashed border-ink-300 bg-white/60 px-4 py-8 text-center text-sm text-ink-700">
            {filtered ? 'No waiting reading matches these filters.' : 'Nothing waiting. New readings appear here as soon as the analyzer sends them.'}
          </p>
        )}
        {specimens.length > 0 && (
          <ul ref={listRef} className="space-y-2" aria-label="Waiting samples (arrow keys move, Enter assigns)" onKeyDown={onListKey} data-testid="intake-list">
            {specimens.map((s, index) => {
              const waited = minutesSince(s.receivedAt, now);
              const overdue = waited >= highlightAfter;
              const panel = s.readings.length > 1;
              const panelSuggestion = suggestions.data ? (s.readings.map((r) => suggestions.data!.suggestions[r.id]).find((x) => x && x.candidates.length) ?? null) : undefined;
              return (
                <li
                  key={s.id}
                  data-specimen-id={s.id}
                  data-overdue={overdue ? 'true' : undefined}
                  tabIndex={0}
                  onFocus={(e) => {
                    if (e.target === e.currentTarget) focusIndex.current = index;
                  }}
                  aria-label={`${s.instrumentName ?? s.instrumentCode}, ${s.readings.length} result${panel ? 's' : ''}${s.sampleId ? `, sample ${s.sampleId}` : ''}, waiting ${waitedText(waited)}`}
                  className={`grid gap-3 rounded-lg border bg-white p-3 text-sm shadow-sm outline-offset-2 focus:outline-2 focus:outline-ink-700 md:grid-cols-[minmax(9rem,12rem)_minmax(0,1fr)_minmax(12rem,16rem)] ${
                    overdue ? 'border-l-4 border-signal-500 border-y-ink-100 border-r-ink-100' : 'border-ink-100'
                  } ${fresh.has(s.id) ? 'animate-arrive' : ''}`}
                >
                  <div className="min-w-0">
                    <p className="font-medium">{s.instrumentName ?? <span className="text-ink-500">{s.instrumentCode} (not configured)</span>}</p>
                    <p className="text-ink-700">
                      {s.sampleId || s.patientRef ? (
                        <span className="font-mono break-all">{[s.sampleId, s.patientRef].filter(Boolean).join(' / ')}</span>
                      ) : (
                        <span className="text-ink-500">no ID printed</span>
                      )}
                    </p>
                    <p className={overdue ? 'font-semibold text-signal-600' : 'text-ink-700'} title={formatDateTime(s.receivedAt)}>
                      {overdue ? `Waiting ${waitedText(waited)}` : timeAgo(s.receivedAt, now)}
                      {fresh.has(s.id) && <span className="ml-2 rounded bg-signal-500 px-1.5 py-0.5 text-[10px] font-bold uppercase text-white">new</span>}
                    </p>
                  </div>
                  <div className="min-w-0">
                    <ul className="flex flex-wrap gap-1.5" aria-label={panel ? `Panel of ${s.readings.length} results` : 'Result'} data-testid="panel-results">
                      {s.readings.map((r) => (
                        <li
                          key={r.id}
                          data-reading-id={r.id}
                          data-critical={r.critical ? (r.critical.certain ? 'yes' : 'possible') : undefined}
                          className="rounded border border-ink-100 bg-paper px-2 py-1"
                        >
                          <span className="text-xs font-medium text-ink-700">{r.analyte}</span>{' '}
                          <span className="font-mono font-semibold" data-testid="reading-value" title={r.unit ? `UCUM ${r.unit}` : undefined}>
                            {formatValue(r)}
                          </span>
                          {instrumentFlagsText(r.flags) && (
                            <span className="ml-1 rounded bg-alarm-100 px-1 text-xs font-semibold text-alarm-700" data-testid="analyzer-flag" title="Flag sent by the analyzer">
                              {instrumentFlagsText(r.flags)}
                            </span>
                          )}
                          <QualityMarks marks={markViews(r.qualityMarks)} />
                          {r.instrumentRange && <span className="block text-xs text-ink-500">analyzer range {r.instrumentRange}</span>}
                          {r.enteredByName && <span className="block text-xs text-signal-600">typed in by {r.enteredByName}</span>}
                          {r.notes.length > 0 && <span className="block max-w-xs text-xs text-ink-700">Note: {r.notes.join(' · ')}</span>}
                          {r.critical && (
                            <p className="mt-1 max-w-56 rounded bg-alarm-100 px-1.5 py-0.5 text-xs font-semibold text-alarm-700" data-testid="critical-before-assignment" role="note">
                              {r.critical.text}
                            </p>
                          )}
                        </li>
                      ))}
                    </ul>
                    <p className="mt-1 text-xs text-ink-500">Measured {formatDateTime(s.readings[0].measuredAt)}</p>
                    {panel && (
                      <details className="mt-1 text-xs">
                        <summary className="cursor-pointer text-ink-700">Split one reading off</summary>
                        <div className="mt-1 flex flex-wrap gap-1">
                          {s.readings.map((r) => (
                            <button key={r.id} type="button" className={buttonClass.quiet} onClick={() => split(r.id)} aria-label={`Split ${r.analyte} off this panel`}>
                              {r.analyte}
                            </button>
                          ))}
                        </div>
                      </details>
                    )}
                  </div>
                  <div className="flex min-w-0 flex-col gap-2">
                    {panel ? (
                      <PanelSuggestion specimen={s} suggestion={panelSuggestion} suggestions={suggestions.data?.suggestions} onAssigned={(m) => (setDone(m), refresh())} />
                    ) : (
                      <SuggestedMatch
                        readingId={s.readings[0].id}
                        analyte={s.readings[0].analyte}
                        suggestion={suggestions.data?.suggestions[s.readings[0].id]}
                        onAssigned={(message) => {
                          setDone(message);
                          refresh();
                        }}
                      />
                    )}
                    <div className="flex flex-wrap gap-2">
                      <button type="button" className={buttonClass.primary} onClick={() => setAssigning(s)} data-testid="assign-specimen" data-action="assign">
                        {panel ? `Assign ${s.readings.length}…` : 'Assign…'}
                      </button>
                      <button type="button" className={buttonClass.secondary} onClick={() => setVoiding(s)}>
                        Void…
                      </button>
                      {!panel && <MarkControlButton readingId={s.readings[0].id} onDone={(message) => (setDone(message), refresh())} />}
                    </div>
                  </div>
                </li>
              );
            })}
          </ul>
        )}
        {matching && matching.specimens > 0 && (
          <nav className="mt-3 flex flex-wrap items-center justify-between gap-2 text-sm" aria-label="Pages of waiting readings" data-testid="intake-pager">
            <span className="text-ink-700">
              Samples {firstShown}–{Math.min(matching.specimens, firstShown + specimens.length - 1)} of {matching.specimens}
              {filtered && waiting ? ` (filtered; ${waiting.specimens} in all)` : ''}
            </span>
            <span className="flex items-center gap-2">
              <button type="button" className={buttonClass.secondary} disabled={page <= 1} onClick={() => setPage((p) => Math.max(1, p - 1))}>
                Newer
              </button>
              <span data-testid="page-of">
                Page {page} of {pages}
              </span>
              <button type="button" className={buttonClass.secondary} disabled={page >= pages} onClick={() => setPage((p) => Math.min(pages, p + 1))}>
                Older
              </button>
            </span>
          </nav>
        )}
      </section>

      <UnparsedCaptures onDone={setDone} />

      {assigning && (
        <AssignDialog
          specimen={assigning}
          onClose={(message) => {
            setAssigning(null);
            if (message) setDone(message);
            refresh();
          }}
        />
      )}
      {voiding && (
        <VoidDialog
          specimen={voiding}
          onClose={(message) => {
            setVoiding(null);
            if (message) setDone(message);
            refresh();
          }}
        />
      )}
    </div>
  );
}
