'use client';
// The live feed: one WebSocket per tab. Events mark the SWR data they concern stale, and a burst of
// them is coalesced into one refetch per list (lib/live/coalesce.ts); after a reconnect everything is
// revalidated, since events may have been missed meanwhile.
import { createContext, useContext, useEffect, useRef, useState } from 'react';
import { useSWRConfig } from 'swr';
import { StaleKeys } from '@/lib/live/coalesce';
import type { LiveEvent } from '@/lib/live/events';

/** How long a burst of events may gather before the lists it touched are refetched. */
const COALESCE_MS = 150;

type Listener = (event: LiveEvent) => void;
type LiveState = 'connecting' | 'live' | 'offline';

const LiveContext = createContext<{ state: LiveState; listen: (fn: Listener) => () => void }>({
  state: 'connecting',
  listen: () => () => {},
});

/** Which SWR keys (by prefix) an event makes stale. Suggestions live under /api/readings and depend on orders. */
export function revalidates(event: LiveEvent): string[] {
  const family = event.type.split('.')[0];
  const keys: string[] = [];
  // A new reading is unassigned: it changes Intake (list and suggestions) and nothing on a record, a
  // review list, an alert or a test (placing it by the exact-ID rule sends reading.assigned as well).
  if (event.type === 'reading.created') keys.push('/api/readings');
  else if (family === 'reading') keys.push('/api/readings', '/api/reviews', '/api/alerts', '/api/orders');
  if (family === 'capture') keys.push('/api/captures');
  if (family === 'order') keys.push('/api/orders', '/api/readings');
  if (family === 'review') keys.push('/api/reviews');
  if (family === 'alert') keys.push('/api/alerts');
  if (family === 'patient') keys.push('/api/patients', '/api/readings', '/api/orders');
  // Lab quality: kit stock, QC runs and marks, instrument health; QC readings leave Intake.
  if (family === 'quality') keys.push('/api/quality', '/api/readings', '/api/patients');
  if (family === 'instrument' || family === 'reading' || family === 'capture') keys.push('/api/quality/health');
  if (family === 'mail' || family === 'report') keys.push('/api/admin/mail');
  if (family === 'staff') keys.push('/api/alerts', '/api/admin/staff');
  if (family === 'settings') keys.push('/api/admin/clinical', '/api/patients', '/api/readings', '/api/orders');
  if (event.patientId) keys.push(`/api/patients/${event.patientId}`);
  return keys;
}

export function LiveProvider({ children }: { children: React.ReactNode }) {
  const { mutate } = useSWRConfig();
  const [state, setState] = useState<LiveState>('connecting');
  const listeners = useRef(new Set<Listener>());
  const stale = useRef<StaleKeys | null>(null);

  useEffect(() => {
    let socket: WebSocket | null = null;
    let retry: ReturnType<typeof setTimeout> | undefined;
    let attempts = 0;
    let stopped = false;
    let flushTimer: ReturnType<typeof setTimeout> | undefined;
    stale.current = new StaleKeys(
      (flush) => (flushTimer = setTimeout(flush, COALESCE_MS)),
      (isStale) => void mutate(isStale),
    );

    const connect = () => {
      const url = `${location.protocol === 'https:' ? 'wss' : 'ws'}://${location.host}/api/live`;
      socket = new WebSocket(url);
      socket.onopen = () => {
        if (attempts > 0) void mutate(() => true);
        attempts = 0;
        setState('live');
      };
      socket.onmessage = (message) => {
        let event: LiveEvent;
        try {
          event = JSON.parse(String(message.data));
        } catch {
          return;
        }
        if (!('clinicId' in event)) return;
        stale.current?.mark(revalidates(event));
        for (const listener of listeners.current) listener(event);
      };
      socket.onclose = () => {
        if (stopped) return;
        setState('offline');
        attempts += 1;
        // Back off up to 15 s; the server may be restarting.
        retry = setTimeout(connect, Math.min(15_000, 500 * 2 ** Math.min(attempts, 5)));
      };
    };
    connect();
    return () => {
      stopped = true;
      clearTimeout(retry);
      clearTimeout(flushTimer);
      socket?.close();
    };
  }, [mutate]);

  const listen = (fn: Listener) => {
    listeners.current.add(fn);
    return () => listeners.current.delete(fn);
  };

  return <LiveContext.Provider value={{ state, listen }}>{children}</LiveContext.Provider>;
}

export function useLive() {
  return useContext(LiveContext);
}

export function LiveStatus() {
  const { state } = useLive();
  const label = { connecting: 'Connecting…', live: 'Live', offline: 'Reconnecting…' }[state];
  return (
    <span className="flex items-center gap-1.5 text-xs" data-live-state={state} role="status" aria-live="polite">
      <span
        aria-hidden="true"
        className={`h-2 w-2 rounded-full ${state === 'live' ? 'bg-moss-100 ring-2 ring-moss-700' : 'bg-signal-500'}`}
      />
      {label}
    </span>
  );
}
