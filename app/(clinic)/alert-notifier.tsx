'use client';
// Critical results reach the attending veterinarian at once: a count in the header, and a notice that
// stays until dismissed when one arrives live. The list on Review stays until someone acknowledges.
import Link from 'next/link';
import { useEffect, useState } from 'react';
import useSWR from 'swr';
import { fetcher } from '@/lib/client/fetcher';
import type { AlertView } from '@/lib/clinical/review';
import { useActor } from './actor';
import { useLive } from './live';

type Alert = Omit<AlertView, 'createdAt' | 'acknowledgedAt' | 'withdrawnAt'> & { createdAt: string };

export function AlertNotifier() {
  const actor = useActor();
  const { listen } = useLive();
  const { data } = useSWR<{ alerts: Alert[] }>('/api/alerts?status=open&mine=1', fetcher, { refreshInterval: 120_000 });
  const [arrived, setArrived] = useState<string[]>([]);

  useEffect(
    () =>
      listen((event) => {
        if (event.type === 'alert.created' && (!event.userId || event.userId === actor.userId)) {
          setArrived((ids) => [...ids, event.id]);
        }
      }),
    [listen, actor.userId],
  );

  // Nothing until the list has loaded: a "0" before then would be a false all-clear.
  if (actor.role !== 'veterinarian' || !data) return null;
  const open = data.alerts;
  const fresh = open.filter((a) => arrived.includes(a.id));
  return (
    <>
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
