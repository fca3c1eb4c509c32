'use client';
import Link from 'next/link';
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import type { StaffRole } from '@/db/schema';
import { fetcher, send } from '@/lib/client/fetcher';
import { FLAG_CODE, type FlagResult } from '@/lib/clinical/flags';
import { formatMeasured, formatDateTime } from '@/lib/format';
import { useNow } from '../use-now';

/** "12 min", "1 h 05 min": how long a critical result has waited for acknowledgement. */
export function waitedFor(fromIso: string, now: number): string {
  const minutes = Math.max(0, Math.floor((now - new Date(fromIso).getTime()) / 60_000));
  if (minutes < 60) return `${minutes} min`;
  return `${Math.floor(minutes / 60)} h ${String(minutes % 60).padStart(2, '0')} min`;
}

interface AlertRow {
  id: string;
  patientId: string;
  patientName: string;
  patientRecordNumber: string;
  message: string;
  createdAt: string;
  recipientId: string | null;
  escalatedAt: string | null;
}

interface UnreviewedRow {
  id: string;
  analyte: string;
  display: { value: number | null; comparator: '<' | '>' | null; unit: string | null };
  flag: FlagResult | null;
  analyzerFlag: { codes: string[]; text: string; abnormal: boolean } | null;
  qualitative: { label: string; abnormal: boolean | null; basis: string } | null;
  band: { label: string; certain: boolean } | null;
  intervalOrigin: 'clinic' | 'analyzer' | null;
  decimals: number;
  measuredAt: string | null;
  receivedAt: string;
  patientId: string;
  patientName: string;
  patientRecordNumber: string;
  attendingVetName: string | null;
}

export function ReviewBoard({ role }: { role: StaffRole }) {
  const [mine, setMine] = useState(role === 'veterinarian');
  // On duty, "mine" still shows every open critical result: they are everyone's until acknowledged.
  const alerts = useSWR<{ alerts: AlertRow[] }>(`/api/alerts?status=open&mine=${mine ? 'duty' : 0}`, fetcher);
  const now = useNow(30_000);
  const unreviewed = useSWR<{ results: UnreviewedRow[] }>(`/api/reviews/unreviewed?mine=${mine ? 1 : 0}`, fetcher);
  const [failure, setFailure] = useState<string | null>(null);
  const [selected, setSelected] = useState<Set<string>>(new Set());
  const [comment, setComment] = useState('');
  const [signing, setSigning] = useState(false);
  const [signFailure, setSignFailure] = useState<string | null>(null);
  const [signed, setSigned] = useState<string | null>(null);
  const canSign = role === 'veterinarian';
  const rows = unreviewed.data?.results ?? [];
  const shown = rows.filter((r) => selected.has(r.id));
  const allChosen = rows.length > 0 && shown.length === rows.length;
  const toggle = (id: string) =>
    setSelected((s) => {
      const next = new Set(s);
      if (next.has(id)) next.delete(id);
      else next.add(id);
      return next;
    });

  const signOff = async (ids: string[]) => {
    setSignFailure(null);
    setSigned(null);
    setSigning(true);
    try {
      const result = await send<{ signedOff: string[] }>('/api/reviews/sign-off', 'POST', { readingIds: ids, comment: comment.trim() || undefined });
      setSigned(`Signed off ${result.signedOff.length} result${result.signedOff.length === 1 ? '' : 's'}${comment.trim() ? ' with your comment' : ''}.`);
      setSelected(new Set());
      setComment('');
    } catch (error) {
      setSignFailure(error instanceof Error ? error.message : 'Could not sign off.');
    } finally {
      setSigning(false);
      void unreviewed.mutate();
    }
  };

  const acknowledge = async (id: string) => {
    setFailure(null);
    try {
      await send(`/api/alerts/${id}/acknowledge`, 'POST', {});
      void alerts.mutate();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not acknowledge.');
    }
  };

  return (
    <div className="space-y-8">
      {role === 'veterinarian' && (
        <label className="flex items-center gap-2 text-sm">
          <input type="checkbox" checked={mine} onChange={(e) => setMine(e.target.checked)} /> Only my patients
        </label>
      )}
      <section aria-labelledby="alerts-heading">
        <h2 id="alerts-heading" className="mb-3 text-lg font-semibold">
          Critical results to acknowledge
        </h2>
        {failure && <Notice tone="error">{failure}</Notice>}
        {alerts.data?.alerts.length === 0 && <p className="text-sm text-ink-500">None open.</p>}
        <ul className="space-y-2" data-testid="open-alerts">
          {alerts.data?.alerts.map((a) => (
            <li key={a.id} data-alert-id={a.id} className="flex flex-wrap items-center gap-3 rounded-lg border border-alarm-700/40 bg-alarm-100 p-3 text-sm">
              <span className="font-semibold text-alarm-700">Critical</span>
              <span className="flex-1">{a.message}</span>
              <span className="text-xs text-ink-700">
                {formatDateTime(a.createdAt)} ·{' '}
                <strong className="text-alarm-700" data-testid="alert-waiting">
                  waiting {waitedFor(a.createdAt, now)}
                </strong>
                {a.escalatedAt && <> · e-mailed to the escalation list {formatDateTime(a.escalatedAt)}</>}
              </span>
              <Link className={buttonClass.secondary} href={`/patients/${a.patientId}`}>
                Open chart
              </Link>
              {role === 'veterinarian' && (
                <button type="button" className={buttonClass.primary} onClick={() => acknowledge(a.id)}>
                  Acknowledge
                </button>
              )}
            </li>
          ))}
        </ul>
      </section>
      <section aria-labelledby="unreviewed-heading">
        <h2 id="unreviewed-heading" className="mb-3 text-lg font-semibold">
          Not yet reviewed
        </h2>
        {signed && <Notice tone="ok">{signed}</Notice>}
        {signFailure && <Notice tone="error">{signFailure}</Notice>}
        {unreviewed.data?.results.length === 0 && <p className="text-sm text-ink-500">Everything is signed off.</p>}
        {canSign && rows.length > 0 && (
          <form
            className="mb-3 flex flex-wrap items-end gap-3 rounded-lg border border-ink-100 bg-white p-3 shadow-sm"
            aria-label="Sign off the chosen results"
            onSubmit={(e) => {
              e.preventDefault();
              if (shown.length) void signOff(shown.map((r) => r.id));
            }}
          >
            <div className="min-w-0 flex-1 basis-64">
              <label htmlFor="signoff-comment" className="mb-1 block text-sm font-medium">
                Comment for the chosen results (optional)
              </label>
              <input id="signoff-comment" className={inputClass} value={comment} onChange={(e) => setComment(e.target.value)} maxLength={2000} />
            </div>
            <button type="submit" className={buttonClass.primary} disabled={signing || shown.length === 0} data-testid="sign-off-selected">
              {signing ? 'Signing off…' : shown.length ? `Sign off ${shown.length} chosen` : 'Choose results to sign off'}
            </button>
          </form>
        )}
        {unreviewed.data && unreviewed.data.results.length > 0 && (
          <div className="relative overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
            <table className="cards-on-phone min-w-full divide-y divide-ink-100 text-sm" data-testid="unreviewed-results">
              <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
                <tr>
                  {canSign && (
                    <th scope="col" className="px-4 py-2">
                      <input
                        type="checkbox"
                        aria-label="Choose all results listed"
                        checked={allChosen}
                        onChange={() => setSelected(allChosen ? new Set() : new Set(rows.map((r) => r.id)))}
                      />
                    </th>
                  )}
                  <th scope="col" className="px-4 py-2">Patient</th>
                  <th scope="col" className="px-4 py-2">Test</th>
                  <th scope="col" className="px-4 py-2">Result</th>
                  <th scope="col" className="px-4 py-2">Flag</th>
                  <th scope="col" className="px-4 py-2">Measured</th>
                  <th scope="col" className="px-4 py-2">Attending</th>
                  {canSign && (
                    <th scope="col" className="px-4 py-2">
                      <span className="sr-only">Sign off</span>
                    </th>
                  )}
                </tr>
              </thead>
              <tbody className="divide-y divide-ink-100">
                {unreviewed.data.results.map((r) => (
                  <tr key={r.id} data-unreviewed-id={r.id} className={selected.has(r.id) ? 'bg-ink-100/60' : undefined}>
                    {canSign && (
                      <td className="px-4 py-2">
                        <input
                          type="checkbox"
                          aria-label={`Choose ${r.analyte} of ${r.patientName}`}
                          checked={selected.has(r.id)}
                          onChange={() => toggle(r.id)}
                        />
                      </td>
                    )}
                    <td data-label="Patient" className="px-4 py-2">
                      <Link href={`/patients/${r.patientId}`} className="font-medium underline-offset-2 hover:underline">
                        {r.patientName}
                      </Link>{' '}
                      <span className="font-mono text-xs">{r.patientRecordNumber}</span>
                    </td>
                    <td data-label="Test" className="px-4 py-2">{r.analyte}</td>
                    <td data-label="Result" className="px-4 py-2 font-mono font-semibold">
                      {r.qualitative ? r.qualitative.label : formatMeasured(r.display, r.decimals)}
                      {r.band && (
                        <span className="block font-sans text-xs font-normal text-ink-700">
                          {r.band.label}
                          {r.intervalOrigin === 'analyzer' && ' (interval from the analyzer)'}
                        </span>
                      )}
                    </td>
                    <td data-label="Flag" className="px-4 py-2 text-xs" title={[r.flag?.text, r.analyzerFlag?.text, r.qualitative?.basis].filter(Boolean).join(' · ')} data-testid="review-flag">
                      {r.flag ? `${FLAG_CODE[r.flag.flag]}${r.flag.certain ? '' : '?'}` : r.qualitative ? (r.qualitative.abnormal === null ? 'not interpreted' : r.qualitative.abnormal ? 'Abnormal' : 'Normal') : r.analyzerFlag ? '' : '—'}
                      {r.analyzerFlag && <span className="ml-1 text-alarm-700">analyzer: {r.analyzerFlag.codes.join(', ')}</span>}
                    </td>
                    <td data-label="Measured" className="whitespace-nowrap px-4 py-2">{formatDateTime(r.measuredAt ?? r.receivedAt)}</td>
                    <td data-label="Attending" className="px-4 py-2">{r.attendingVetName ?? '—'}</td>
                    {canSign && (
                      <td className="px-4 py-2 text-right">
                        <button
                          type="button"
                          className={buttonClass.quiet}
                          disabled={signing}
                          onClick={() => void signOff([r.id])}
                          aria-label={`Sign off ${r.analyte} of ${r.patientName}${comment.trim() ? ' with the comment' : ''}`}
                        >
                          Sign off
                        </button>
                      </td>
                    )}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </section>
    </div>
  );
}
