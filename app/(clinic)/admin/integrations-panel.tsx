'use client';
// Tokens for systems that read results over the FHIR API (at /fhir): issued here, shown once, revocable.
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import { Panel, td, th } from './panel';

interface Integration {
  id: string;
  name: string;
  tokenHint: string;
  createdAt: string;
  revokedAt: string | null;
  lastUsedAt: string | null;
}

export function IntegrationsPanel() {
  const { data, mutate } = useSWR<{ integrations: Integration[] }>('/api/admin/integrations', fetcher);
  const [name, setName] = useState('');
  const [issued, setIssued] = useState<{ name: string; token: string } | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const run = async (what: () => Promise<unknown>) => {
    setFailure(null);
    try {
      await what();
      await mutate();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not save.');
    }
  };
  return (
    <Panel id="integrations" title="FHIR integrations" intro="Systems that read patients and results over FHIR R4 at /fhir (read only). Each has its own token.">
      {failure && (
        <div className="mb-3">
          <Notice tone="error">{failure}</Notice>
        </div>
      )}
      {issued && (
        <div className="mb-4 rounded-lg border border-signal-500 bg-signal-100 p-3 text-sm">
          <p className="font-semibold">Token for {issued.name}: copy it now, it is shown only once.</p>
          <code className="mt-1 block break-all rounded bg-white p-2 font-mono text-xs">{issued.token}</code>
          <button type="button" className={`${buttonClass.quiet} mt-2`} onClick={() => setIssued(null)}>
            I have stored it
          </button>
        </div>
      )}
      <table className="mb-4 min-w-full text-sm">
        <thead>
          <tr>
            <th className={th}>Name</th>
            <th className={th}>Token</th>
            <th className={th}>Last used</th>
            <th className={th}>
              <span className="sr-only">Actions</span>
            </th>
          </tr>
        </thead>
        <tbody>
          {data?.integrations.map((i) => (
            <tr key={i.id} className={`border-t border-ink-100 ${i.revokedAt ? 'text-ink-500' : ''}`}>
              <td className={td}>{i.name}</td>
              <td className={`${td} font-mono`}>
                {i.tokenHint}…{i.revokedAt && ` (revoked ${formatDateTime(i.revokedAt)})`}
              </td>
              <td className={td}>{i.lastUsedAt ? formatDateTime(i.lastUsedAt) : 'never'}</td>
              <td className={`${td} text-right`}>
                {!i.revokedAt && (
                  <button type="button" className={buttonClass.danger} onClick={() => confirm(`Revoke the token of “${i.name}”?`) && run(() => send(`/api/admin/integrations/${i.id}/revoke`, 'POST'))}>
                    Revoke
                  </button>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      <form
        className="flex flex-wrap items-end gap-3 text-sm"
        onSubmit={(e) => {
          e.preventDefault();
          void run(async () => {
            const result = await send<{ integration: { name: string; token: string } }>('/api/admin/integrations', 'POST', { name });
            setIssued(result.integration);
            setName('');
          });
        }}
      >
        <label className="block">
          <span className="font-medium">System name</span>
          <input className={inputClass} value={name} onChange={(e) => setName(e.target.value)} required minLength={2} maxLength={100} />
        </label>
        <button type="submit" className={buttonClass.primary}>
          Issue a token
        </button>
      </form>
    </Panel>
  );
}
