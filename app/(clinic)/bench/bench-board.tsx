'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { abortProbability, type TimingModel } from '@/lib/clinical/matching';
import { formatCountdown, formatDuration, runState } from '@/lib/clinical/protocols';
import { formatDateTime } from '@/lib/format';
import type { OrderView } from '@/lib/orders';
import { SAMPLE_TYPE_LABELS } from '@/lib/validation/clinical';
import { useNow } from '../use-now';

export type BenchOrder = Omit<OrderView, 'startedAt' | 'dueAt'> & { startedAt: string; dueAt: string };

const clock = (iso: string) => new Date(iso).toLocaleTimeString(undefined, { hour: '2-digit', minute: '2-digit', second: '2-digit' });

/** From this chance on, an overdue run is offered for closing in one click. */
const STALE_AT = 0.9;

export function BenchBoard({ canRun }: { canRun: boolean }) {
  // Countdowns run on the server's clock: the offset is measured each time the list arrives.
  const [offset, setOffset] = useState(0);
  const { data, error, mutate } = useSWR<{ orders: BenchOrder[]; timing: TimingModel; now: string }>('/api/orders?status=open', fetcher, {
    refreshInterval: 60_000,
    onSuccess: (d) => setOffset(new Date(d.now).getTime() - Date.now()),
  });
  const now = new Date(useNow() + offset);
  const [closing, setClosing] = useState<{ order: BenchOrder; outcome: 'abort' | 'cancel' } | null>(null);
  const [done, setDone] = useState<string | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const orders = data?.orders ?? [];
  // One click: a run long overdue with no reading is closed as aborted (the test still counts as used).
  const closeAsAborted = async (o: BenchOrder, overdueSeconds: number) => {
    setFailure(null);
    try {
      await send(`/api/orders/${o.id}/abort`, 'POST', { reason: `No reading ${formatDuration(overdueSeconds)} after the due time: probably aborted (closed from the bench)` });
      setDone(`${o.patientName}'s ${o.analyte} run closed as aborted; the test is counted as used.`);
      void mutate();
    } catch (e) {
      setFailure(e instanceof Error ? e.message : 'Could not close the run.');
    }
  };

  return (
    <section aria-labelledby="running-heading">
      <h2 id="running-heading" className="mb-3 flex items-center gap-2 text-lg font-semibold">
        Running tests
        <span className="rounded-full bg-ink-100 px-2 py-0.5 text-xs font-semibold text-ink-700" data-testid="running-count">
          {data ? orders.length : '…'}
        </span>
      </h2>
      {done && (
        <div className="mb-3">
          <Notice tone="ok">{done}</Notice>
        </div>
      )}
      {error && <Notice tone="error">Could not load the bench: {error.message}</Notice>}
      {failure && <Notice tone="error">{failure}</Notice>}
      {data && orders.length === 0 && (
        <p className="rounded-lg border border-dashed border-ink-300 bg-white/60 px-4 py-8 text-center text-sm text-ink-700">
          No tests running. Start one when the sample goes in.
        </p>
      )}
      <ul className="grid gap-3 sm:grid-cols-2">
        {orders.map((o) => {
          const state = runState(new Date(o.startedAt), o.stages, now, o.lateSeconds ?? 180);
          // How likely the run was aborted, given no reading so far: grows with how overdue it is, judged
          // with the clinic's learned timing (the matcher's estimate, sent with the list).
          const staleness = state.phase === 'overdue' ? abortProbability(-state.secondsToDue, data?.timing) : 0;
          const probablyAborted = staleness >= STALE_AT;
          const tone =
            state.phase === 'overdue'
              ? 'border-alarm-700 bg-alarm-100'
              : state.phase === 'due'
                ? 'border-signal-500 bg-signal-100'
                : 'border-ink-100 bg-white';
          return (
            <li key={o.id} data-order-id={o.id} data-phase={state.phase} data-probably-aborted={probablyAborted || undefined} className={`rounded-lg border p-4 shadow-sm ${tone}`}>
              <div className="flex items-baseline justify-between gap-2">
                <p className="font-semibold">
                  {o.patientName} <span className="font-mono text-sm font-normal text-ink-700">{o.patientRecordNumber}</span>
                </p>
                <span className="font-mono text-2xl font-semibold tabular-nums" aria-label="Time to due" data-testid="countdown">
                  {formatCountdown(state.secondsToDue)}
                </span>
              </div>
              <p className="text-sm text-ink-700">
                {o.analyte} · {SAMPLE_TYPE_LABELS[o.sampleType]} · {o.instrumentName ?? 'instrument not chosen'}
                {o.sampleId && <> · tube <span className="font-mono">{o.sampleId}</span></>}
              </p>
              <p className="mt-1 text-sm">
                {state.phase === 'running' && state.stage && (
                  <span className={state.stage.handsOn ? 'font-semibold text-signal-600' : undefined}>
                    {state.stage.label}
                    {state.stage.maxSeconds != null && ` (within ${state.stage.maxSeconds} s)`} · {formatCountdown(state.secondsLeftInStage)} left
                  </span>
                )}
                {state.phase === 'due' && <span className="font-semibold text-signal-600">Due now: the reading should be printing.</span>}
                {state.phase === 'overdue' && !probablyAborted && (
                  <span className="font-semibold text-alarm-700">Overdue: check the reader; abort the test if the run failed.</span>
                )}
                {probablyAborted && (
                  <span className="font-semibold text-alarm-700" data-testid="probably-aborted">
                    Probably aborted ({Math.floor(staleness * 100)} % likely: no reading {formatDuration(-state.secondsToDue)} after the due time) — close it?
                  </span>
                )}
              </p>
              {probablyAborted && canRun && (
                <button type="button" className={`${buttonClass.primary} mt-2`} onClick={() => closeAsAborted(o, -state.secondsToDue)}>
                  Close as aborted (test used)
                </button>
              )}
              <p className="mt-1 text-xs text-ink-500">
                Started {clock(o.startedAt)} by {o.startedByName} · due {clock(o.dueAt)} · ordered by {o.orderedByName}
              </p>
              {canRun && (
                <div className="mt-3 flex gap-2">
                  <button type="button" className={buttonClass.secondary} onClick={() => setClosing({ order: o, outcome: 'abort' })}>
                    Abort…
                  </button>
                  <button type="button" className={buttonClass.quiet} onClick={() => setClosing({ order: o, outcome: 'cancel' })}>
                    Cancel…
                  </button>
                </div>
              )}
            </li>
          );
        })}
      </ul>
      {closing && (
        <CloseOrderDialog
          {...closing}
          onClose={(message) => {
            setClosing(null);
            if (message) setDone(message);
          }}
        />
      )}
    </section>
  );
}

function CloseOrderDialog({
  order,
  outcome,
  onClose,
}: {
  order: BenchOrder;
  outcome: 'abort' | 'cancel';
  onClose: (message?: string) => void;
}) {
  const [reason, setReason] = useState(outcome === 'abort' ? 'Cartridge not re-inserted in time' : '');
  const [failure, setFailure] = useState<string | null>(null);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    try {
      await send(`/api/orders/${order.id}/${outcome}`, 'POST', { reason });
      onClose(outcome === 'abort' ? `${order.patientName}'s ${order.analyte} run aborted; the test is counted as used.` : `${order.patientName}'s ${order.analyte} test cancelled.`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not close the test.');
    }
  };
  return (
    <Modal title={outcome === 'abort' ? 'Abort the run' : 'Cancel the test'} onClose={() => onClose()}>
      <p className="mb-3 text-sm">
        {order.patientName} ({order.patientRecordNumber}) · {order.analyte} · started {formatDateTime(order.startedAt)}
      </p>
      <form onSubmit={submit} className="space-y-3" noValidate>
        <Field
          id="close-reason"
          label="Reason"
          hint={outcome === 'abort' ? 'An aborted run still uses up a test.' : 'Cancel a test that never ran.'}
          error={failure ?? undefined}
        >
          <input id="close-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} autoFocus />
        </Field>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>
            Back
          </button>
          <button type="submit" className={buttonClass.danger}>
            {outcome === 'abort' ? 'Abort run' : 'Cancel test'}
          </button>
        </div>
      </form>
    </Modal>
  );
}
