'use client';
// Critical-result escalation (how long before an unacknowledged critical is e-mailed, and to whom) and the
// clinic's outgoing e-mail with its delivery state: failed messages stay listed with the server's answer.
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import { Panel, td, th } from './panel';

interface Settings {
  criticalEscalationMinutes: number;
  escalationEmails: string[];
}

interface MailRow {
  id: string;
  purpose: string;
  toAddresses: string[];
  subject: string;
  status: 'queued' | 'sent' | 'failed';
  attempts: number;
  maxAttempts: number;
  nextAttemptAt: string;
  lastError: string | null;
  sentAt: string | null;
  createdAt: string;
}

export const MAIL_STATUS_LABEL: Record<MailRow['status'], string> = { queued: 'Waiting to send', sent: 'Sent', failed: 'Failed' };

export function AlertsMailPanel() {
  const config = useSWR<{ settings: Settings }>('/api/admin/clinical', fetcher);
  const mail = useSWR<{ mail: MailRow[] }>('/api/admin/mail', fetcher, { refreshInterval: 30_000 });
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const run = async (what: () => Promise<unknown>, ok: string) => {
    setMessage(null);
    try {
      await what();
      setMessage({ tone: 'ok', text: ok });
      void config.mutate();
      void mail.mutate();
    } catch (e) {
      setMessage({ tone: 'error', text: e instanceof Error ? e.message : 'Could not save.' });
    }
  };
  return (
    <Panel id="alerts-mail" title="Critical escalation and e-mail" intro="Who is told when a critical result waits too long, and every e-mail Benchwire has sent or is trying to send.">
      {message && (
        <div className="mb-3">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      {config.data && (
        <EscalationForm
          key={JSON.stringify(config.data.settings)}
          settings={config.data.settings}
          onSave={(body) => run(() => send('/api/admin/clinical', 'PATCH', body), 'Escalation settings saved.')}
        />
      )}
      <h3 className="mb-2 mt-6 font-semibold">Outgoing e-mail</h3>
      {mail.error && <Notice tone="error">Could not load e-mail: {mail.error.message}</Notice>}
      {mail.data?.mail.length === 0 && <p className="text-sm text-ink-500">Nothing sent yet.</p>}
      {mail.data && mail.data.mail.length > 0 && (
        <div className="relative overflow-x-auto">
          <table className="min-w-full text-sm" data-testid="mail-list">
            <thead>
              <tr>
                <th className={th}>Queued</th>
                <th className={th}>To</th>
                <th className={th}>Subject</th>
                <th className={th}>State</th>
                <th className={th}></th>
              </tr>
            </thead>
            <tbody>
              {mail.data.mail.map((m) => (
                <tr key={m.id} data-mail-id={m.id} data-mail-status={m.status} className="border-t border-ink-100">
                  <td className={`${td} whitespace-nowrap`}>{formatDateTime(m.createdAt)}</td>
                  <td className={td}>{m.toAddresses.join(', ')}</td>
                  <td className={td}>{m.subject}</td>
                  <td className={td}>
                    <span className={m.status === 'failed' ? 'font-semibold text-alarm-700' : m.status === 'sent' ? 'text-moss-700' : 'text-signal-600'}>
                      {MAIL_STATUS_LABEL[m.status]}
                    </span>
                    <span className="block text-xs text-ink-700">
                      {m.status === 'sent' && `at ${formatDateTime(m.sentAt)}`}
                      {m.status === 'queued' && `attempt ${m.attempts + 1} of ${m.maxAttempts}, ${formatDateTime(m.nextAttemptAt)}`}
                      {m.status === 'failed' && `after ${m.attempts} attempt${m.attempts === 1 ? '' : 's'}`}
                    </span>
                    {m.lastError && m.status !== 'sent' && <span className="block text-xs text-alarm-700">{m.lastError}</span>}
                  </td>
                  <td className={td}>
                    {m.status === 'failed' && (
                      <button type="button" className={buttonClass.secondary} onClick={() => run(() => send(`/api/admin/mail/${m.id}/retry`, 'POST', {}), 'Queued again.')}>
                        Send again
                      </button>
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </Panel>
  );
}

function EscalationForm({ settings, onSave }: { settings: Settings; onSave: (body: Settings) => void }) {
  const [minutes, setMinutes] = useState(String(settings.criticalEscalationMinutes));
  const [emails, setEmails] = useState(settings.escalationEmails.join('\n'));
  return (
    <form
      className="grid gap-3 text-sm sm:grid-cols-[12rem_1fr]"
      aria-label="Critical result escalation"
      onSubmit={(e) => {
        e.preventDefault();
        onSave({
          criticalEscalationMinutes: Number(minutes),
          escalationEmails: emails
            .split(/[\s,;]+/)
            .map((s) => s.trim())
            .filter(Boolean),
        });
      }}
    >
      <label className="block">
        <span className="font-medium">E-mail after (minutes)</span>
        <input className={inputClass} type="number" min={1} max={240} required value={minutes} onChange={(e) => setMinutes(e.target.value)} name="criticalEscalationMinutes" />
      </label>
      <label className="block">
        <span className="font-medium">Escalation list (one address a line)</span>
        <textarea className={inputClass} rows={3} value={emails} onChange={(e) => setEmails(e.target.value)} name="escalationEmails" />
        {!settings.escalationEmails.length && (
          <span className="mt-1 block text-alarm-700">No list set: an unacknowledged critical result is not e-mailed to anyone.</span>
        )}
      </label>
      <div className="sm:col-span-2">
        <button type="submit" className={buttonClass.primary}>
          Save escalation
        </button>
      </div>
    </form>
  );
}
