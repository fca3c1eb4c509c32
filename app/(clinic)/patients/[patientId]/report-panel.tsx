'use client';
// Result reports on the chart: one per visit day, downloadable as PDF; a veterinarian sends a signed-off
// visit to the owner or a referring veterinarian, and every report sent shows its delivery state.
import { useState } from 'react';
import useSWR from 'swr';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import { useActor } from '../../actor';

interface Visit {
  visitDate: string;
  results: number;
  reviewed: number;
}

interface SentReport {
  id: string;
  visitDate: string;
  recipientKind: 'owner' | 'referring-vet';
  recipientName: string | null;
  recipientEmail: string;
  createdAt: string;
  sentByName: string;
  mailStatus: 'queued' | 'sent' | 'failed';
  mailAttempts: number;
  mailLastError: string | null;
  mailSentAt: string | null;
  mailNextAttemptAt: string;
}

const RECIPIENT_LABEL = { owner: 'Owner', 'referring-vet': 'Referring veterinarian' } as const;

export function deliveryText(r: Pick<SentReport, 'mailStatus' | 'mailAttempts' | 'mailSentAt' | 'mailNextAttemptAt' | 'mailLastError'>): string {
  if (r.mailStatus === 'sent') return `Delivered to the mail server ${formatDateTime(r.mailSentAt)}`;
  if (r.mailStatus === 'failed') return `Not delivered after ${r.mailAttempts} attempt${r.mailAttempts === 1 ? '' : 's'}${r.mailLastError ? `: ${r.mailLastError}` : ''}`;
  return r.mailAttempts
    ? `Waiting to send: attempt ${r.mailAttempts} failed${r.mailLastError ? ` (${r.mailLastError})` : ''}; next try ${formatDateTime(r.mailNextAttemptAt)}`
    : 'Waiting to send';
}

export function ReportPanel({ patientId, ownerEmail }: { patientId: string; ownerEmail: string | null }) {
  const actor = useActor();
  const { data, error, mutate } = useSWR<{ visits: Visit[]; reports: SentReport[] }>(`/api/patients/${patientId}/reports`, fetcher, { refreshInterval: 30_000 });
  const [sending, setSending] = useState<string | null>(null);
  const [notice, setNotice] = useState<string | null>(null);
  if (error) return <Notice tone="error">Could not load reports: {error.message}</Notice>;
  if (!data || data.visits.length === 0) return null;
  return (
    <section aria-labelledby="reports-heading" className="mt-8 space-y-3" data-testid="report-panel">
      <div className="flex flex-wrap items-baseline gap-3">
        <h2 id="reports-heading" className="text-lg font-semibold">
          Reports
        </h2>
        <a className={buttonClass.quiet} href={`/api/results/export?patientId=${patientId}`} download>
          All results as CSV
        </a>
      </div>
      {notice && <Notice tone="ok">{notice}</Notice>}
      <ul className="divide-y divide-ink-100 rounded-lg border border-ink-100 bg-white text-sm shadow-sm">
        {data.visits.map((v) => {
          const complete = v.reviewed === v.results;
          return (
            <li key={v.visitDate} className="space-y-2 p-3" data-visit={v.visitDate}>
              <div className="flex flex-wrap items-center gap-3">
                <span className="font-mono font-medium">{v.visitDate}</span>
                <span className={complete ? 'text-moss-700' : 'text-signal-600'}>
                  {v.reviewed} of {v.results} result{v.results === 1 ? '' : 's'} signed off
                </span>
                <a className={buttonClass.secondary} href={`/api/patients/${patientId}/report?visit=${v.visitDate}`} download data-testid="download-report">
                  Download PDF
                </a>
                {actor.role === 'veterinarian' && (
                  <button
                    type="button"
                    className={buttonClass.primary}
                    disabled={!complete}
                    title={complete ? undefined : 'Sign off every result of this visit first.'}
                    onClick={() => setSending(sending === v.visitDate ? null : v.visitDate)}
                    aria-expanded={sending === v.visitDate}
                  >
                    Send report…
                  </button>
                )}
              </div>
              {sending === v.visitDate && (
                <SendForm
                  patientId={patientId}
                  visitDate={v.visitDate}
                  ownerEmail={ownerEmail}
                  onSent={(to) => {
                    setSending(null);
                    setNotice(`Report for ${v.visitDate} queued for ${to}.`);
                    void mutate();
                  }}
                />
              )}
            </li>
          );
        })}
      </ul>
      {data.reports.length > 0 && (
        <div className="relative overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
          <table className="min-w-full divide-y divide-ink-100 text-sm" data-testid="sent-reports">
            <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
              <tr>
                <th scope="col" className="px-4 py-2">Sent</th>
                <th scope="col" className="px-4 py-2">Visit</th>
                <th scope="col" className="px-4 py-2">To</th>
                <th scope="col" className="px-4 py-2">By</th>
                <th scope="col" className="px-4 py-2">Delivery</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-ink-100">
              {data.reports.map((r) => (
                <tr key={r.id} data-report-id={r.id} data-delivery={r.mailStatus}>
                  <td className="whitespace-nowrap px-4 py-2">{formatDateTime(r.createdAt)}</td>
                  <td className="px-4 py-2 font-mono">{r.visitDate}</td>
                  <td className="px-4 py-2">
                    {RECIPIENT_LABEL[r.recipientKind]}
                    {r.recipientName ? `, ${r.recipientName}` : ''} <span className="block text-xs text-ink-700">{r.recipientEmail}</span>
                  </td>
                  <td className="px-4 py-2">{r.sentByName}</td>
                  <td className={`px-4 py-2 ${r.mailStatus === 'failed' ? 'font-semibold text-alarm-700' : r.mailStatus === 'sent' ? 'text-moss-700' : 'text-signal-600'}`} data-testid="report-delivery">
                    {deliveryText(r)}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}

function SendForm({ patientId, visitDate, ownerEmail, onSent }: { patientId: string; visitDate: string; ownerEmail: string | null; onSent: (to: string) => void }) {
  const [kind, setKind] = useState<'owner' | 'referring-vet'>('owner');
  const [email, setEmail] = useState(ownerEmail ?? '');
  const [name, setName] = useState('');
  const [message, setMessage] = useState('');
  const [failure, setFailure] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const id = `send-${visitDate}`;
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setFailure(null);
    setBusy(true);
    try {
      await send(`/api/patients/${patientId}/reports`, 'POST', {
        visitDate,
        recipientKind: kind,
        recipientEmail: email || undefined,
        recipientName: name || undefined,
        message: message || undefined,
      });
      onSent(email || 'the owner');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not send.');
    } finally {
      setBusy(false);
    }
  };
  return (
    <form onSubmit={submit} className="grid gap-3 rounded-md border border-ink-100 bg-paper p-3 sm:grid-cols-2" aria-label={`Send the report of ${visitDate}`}>
      <Field id={`${id}-kind`} label="Recipient">
        <select id={`${id}-kind`} className={inputClass} value={kind} onChange={(e) => setKind(e.target.value as typeof kind)}>
          <option value="owner">Owner</option>
          <option value="referring-vet">Referring veterinarian</option>
        </select>
      </Field>
      <Field id={`${id}-email`} label="E-mail address">
        <input id={`${id}-email`} type="email" required={kind === 'referring-vet' || !ownerEmail} className={inputClass} value={email} onChange={(e) => setEmail(e.target.value)} />
      </Field>
      <Field id={`${id}-name`} label="Name (for the greeting)">
        <input id={`${id}-name`} className={inputClass} value={name} onChange={(e) => setName(e.target.value)} />
      </Field>
      <Field id={`${id}-message`} label="Message (optional)" error={failure ?? undefined}>
        <textarea id={`${id}-message`} rows={2} className={inputClass} value={message} onChange={(e) => setMessage(e.target.value)} />
      </Field>
      <div className="sm:col-span-2">
        <button type="submit" className={buttonClass.primary} disabled={busy}>
          Send with the PDF attached
        </button>
      </div>
    </form>
  );
}
