'use client';
// Critical results reach every veterinarian on duty at once (and the attending one in any case): a count
// in the header, and a notice that stays until dismissed when one arrives live. The list on Review stays
// until someone acknowledges; unacknowledged past the clinic's set time, it is e-mailed to the escalation list.
import Link from 'next/link';
import { useRouter } from 'next/navigation';
import { useEffect, useState } from 'react';
import useSWR from 'swr';
import { fetcher, send } from '@/lib/client/fetcher';
import type { AlertView } from '@/lib/clinical/review';
import { useActor } from './actor';
import { useLive } from './live';

type Alert = Omit<AlertView, 'createdAt' | 'acknowledgedAt' | 'withdrawnAt'> & { createdAt: string };

export function AlertNotifier() {
  const actor = useActor();
  const { listen } = useLive();
  const router = useRouter();
  const { data, mutate } = useSWR<{ alerts: Alert[] }>('/api/alerts?status=open&mine=duty', fetcher, { refreshInterval: 60_000 });
  const [arrived, setArrived] = useState<string[]>([]);
  const [dutyError, setDutyError] = useState<string | null>(null);

  useEffect(
    () =>
      listen((event) => {
        if (event.type === 'alert.created' && (actor.onDuty || !event.userId || event.userId === actor.userId)) {
          setArrived((ids) => [...ids, event.id]);
        }
      }),
    [listen, actor.userId, actor.onDuty],
  );

  const toggleDuty = async () => {
    setDutyError(null);
    try {
      await send('/api/auth/me/duty', 'POST', { onDuty: !actor.onDuty });
      router.refresh();
      void mutate();
    } catch (error) {
      setDutyError(error instanceof Error ? error.message : 'Could not change duty.');
    }
  };

  // Nothing until the list has loaded: a "0" before then would be a false all-clear.
  if (actor.role !== 'veterinarian' || !data) return null;
  const open = data.alerts;
  const fresh = open.filter((a) => arrived.includes(a.id));
  return (
    <>
      <button
        type="button"
        onClick={toggleDuty}
        aria-pressed={actor.onDuty}
        title={actor.onDuty ? 'On duty: every open critical result reaches you. Select to go off duty.' : 'Off duty: only your own patients’ critical results. Select to go on duty.'}
        className={`rounded-md border px-2 py-1 text-xs ${actor.onDuty ? 'border-moss-100 bg-moss-700 text-white' : 'border-ink-500 text-ink-300'}`}
        data-testid="duty-toggle"
      >
        {actor.onDuty ? 'On duty' : 'Off duty'}
      </button>
      {dutyError && <span role="alert" className="text-xs text-alarm-100">{dutyError}</span>}
      <Link
        href="/reviews"
        className={`rounded-md px-2 py-1 text-xs font-semibold ${open.length ? 'bg-alarm-700 text-white' : 'text-ink-300'}`}
        data-testid="alert-count"
        aria-label={`${open.length} critical result${open.length === 1 ? '' : 's'} waiting for acknowledgement`}
      >
        Critical: {open.length}
      </Link>
      {fresh.length > 0 && (
        <div role="alert" className="fixed bottom-4 right-4 z-50 max-w-sm space-y-2" data-testid="critical-toast">
          {fresh.map((a) => (
            <div key={a.id} className="rounded-lg border border-alarm-700 bg-white p-3 text-sm text-ink-950 shadow-xl">
              <p className="font-semibold text-alarm-700">Critical result</p>
              <p className="mt-1">{a.message}</p>
              <div className="mt-2 flex gap-3">
                <Link href={`/patients/${a.patientId}`} className="font-medium text-ink-800 underline">
                  Open {a.patientName}’s chart
                </Link>
                <button type="button" className="text-ink-500 hover:underline" onClick={() => setArrived((ids) => ids.filter((id) => id !== a.id))}>
                  Dismiss
                </button>
              </div>
            </div>
          ))}
        </div>
      )}
    </>
  );
}
