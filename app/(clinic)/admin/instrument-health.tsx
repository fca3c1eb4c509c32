'use client';
// Lab quality: live health per instrument (link as the bridge reports it, what arrived, link errors,
// kit lot, QC) and bridges shown offline after the clinic's timeout. Kept apart from the instruments
// panel, which edits instruments.
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime, timeAgo } from '@/lib/format';
import type { labHealth } from '@/lib/quality/health';
import type { Jsonify } from '../qc/types';
import { QcStatusBadge } from '../qc/qc-board';
import { useAction } from '../qc/use-action';
import { Panel, td, th } from './panel';

export type LabHealth = Jsonify<Awaited<ReturnType<typeof labHealth>>>;
export const HEALTH_KEY = '/api/quality/health';

export function useLabHealth() {
  // Heartbeats and readings revalidate it live; the poll catches a bridge going silent (no event says that).
  return useSWR<LabHealth>(HEALTH_KEY, fetcher, { refreshInterval: 30_000 });
}

const portTone = (port: string) => (port === 'open' ? 'text-moss-700' : port === 'connecting' ? 'text-signal-600' : 'text-alarm-700');

export function InstrumentHealthPanel() {
  const { data, error } = useLabHealth();
  return (
    <Panel
      id="instrument-health"
      title="Instrument and bridge health"
      intro="Live from each bridge’s heartbeat and the readings received. A bridge not heard from within the timeout is shown offline."
    >
      {error && <Notice tone="error">{error.message}</Notice>}
      {!data && !error && <p className="text-sm text-ink-500">Loading…</p>}
      {data && (
        <div className="space-y-4">
          <ul className="flex flex-wrap gap-2 text-sm" data-testid="bridge-health">
            {data.bridges.map((b) => (
              <li key={b.id} data-offline={b.offline} className={`rounded border px-2 py-1 ${b.offline ? 'border-alarm-700/40 bg-alarm-100 text-alarm-700' : 'border-moss-700/40 bg-moss-100 text-moss-700'}`}>
                Bridge {b.name}: {b.offline ? 'offline' : 'online'} · last heard {b.lastSeenAt ? timeAgo(b.lastSeenAt) : 'never'}
              </li>
            ))}
          </ul>
          <p className="text-xs text-ink-500">Offline after {data.offlineAfterMinutes} min without a heartbeat or upload.</p>
          <div className="relative overflow-x-auto">
            <table className="min-w-full divide-y divide-ink-100 text-sm" data-testid="instrument-health">
              <thead>
                <tr>
                  <th scope="col" className={th}>Instrument</th>
                  <th scope="col" className={th}>Port</th>
                  <th scope="col" className={th}>Last byte · last reading</th>
                  <th scope="col" className={th}>Unparsed · checksum repeats · framing errors</th>
                  <th scope="col" className={th}>Kit lot (tests left)</th>
                  <th scope="col" className={th}>QC</th>
                  <th scope="col" className={th}>Room range (°C)</th>
                </tr>
              </thead>
              <tbody className="divide-y divide-ink-100">
                {data.instruments.map((i) => (
                  <tr key={i.id} data-instrument={i.code}>
                    <td className={td}>
                      <span className="font-medium">{i.name}</span>
                      <span className="block font-mono text-xs text-ink-500">{i.code}</span>
                    </td>
                    <td className={td}>
                      <span className={`font-semibold ${portTone(i.port)}`} data-testid="port-state">
                        {i.port}
                      </span>
                      {i.detail && <span className="block text-xs text-ink-500">{i.detail}</span>}
                      {i.warnings.map((w) => (
                        <span key={w} className="block text-xs text-signal-600">
                          {w}
                        </span>
                      ))}
                    </td>
                    <td className={`${td} text-xs`}>
                      <span className="block" title={i.lastByteAt ? formatDateTime(i.lastByteAt) : undefined}>
                        byte: {i.lastByteAt ? timeAgo(i.lastByteAt) : '—'}
                      </span>
                      <span className="block" title={i.lastReadingAt ? formatDateTime(i.lastReadingAt) : undefined}>
                        reading: {i.lastReadingAt ? timeAgo(i.lastReadingAt) : '—'}
                      </span>
                    </td>
                    <td className={`${td} font-mono text-xs`}>
                      {i.openCaptures} · {i.checksumRetransmissions ?? '—'} · {i.framingErrors ?? '—'}
                    </td>
                    <td className={`${td} text-xs`}>
                      {i.kitLots.length === 0 && <span className="text-ink-500">none loaded</span>}
                      {i.kitLots.map((l) => (
                        <span key={l.id} className="block">
                          {l.analyte} {l.lotNumber}: <span className="font-mono font-semibold">{l.remaining}</span>/{l.total}
                          {l.warnings.length > 0 && <span className="block text-alarm-700">{l.warnings.join('; ')}</span>}
                        </span>
                      ))}
                    </td>
                    <td className={`${td} text-xs`}>
                      <span className="flex flex-wrap gap-1">
                        {i.qc.map((q) => (
                          <span key={q.analyte} className="inline-flex items-center gap-1">
                            {q.analyte} <QcStatusBadge status={q.status} />
                          </span>
                        ))}
                      </span>
                    </td>
                    <td className={td}>
                      <OperatingRange instrumentId={i.id} name={i.name} range={i.operatingRange} />
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        </div>
      )}
    </Panel>
  );
}

/** The room temperature the instrument may run at (from its manual); the daily log is checked against it. */
function OperatingRange({ instrumentId, name, range }: { instrumentId: string; name: string; range: { minC: number | null; maxC: number | null } }) {
  const action = useAction();
  const [minC, setMin] = useState(range.minC === null ? '' : String(range.minC));
  const [maxC, setMax] = useState(range.maxC === null ? '' : String(range.maxC));
  const num = (v: string) => (v.trim() === '' ? null : Number(v));
  return (
    <form
      className="flex flex-wrap items-center gap-1"
      onSubmit={(e) => {
        e.preventDefault();
        void action.run(`/api/quality/instruments/${instrumentId}/operating-range`, 'PUT', { minC: num(minC), maxC: num(maxC) });
      }}
    >
      <label className="sr-only" htmlFor={`min-${instrumentId}`}>
        Lowest room temperature for {name}
      </label>
      <input id={`min-${instrumentId}`} inputMode="decimal" className={`${inputClass} w-16 px-2 py-1`} value={minC} onChange={(e) => setMin(e.target.value)} />
      –
      <label className="sr-only" htmlFor={`max-${instrumentId}`}>
        Highest room temperature for {name}
      </label>
      <input id={`max-${instrumentId}`} inputMode="decimal" className={`${inputClass} w-16 px-2 py-1`} value={maxC} onChange={(e) => setMax(e.target.value)} />
      <button type="submit" className={`${buttonClass.secondary} px-2 py-1`} disabled={action.busy}>
        Save
      </button>
      {action.error && <span role="alert" className="block text-xs text-alarm-700">{action.error}</span>}
    </form>
  );
}
