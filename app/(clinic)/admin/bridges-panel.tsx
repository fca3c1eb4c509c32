'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime, timeAgo } from '@/lib/format';
import { newBridgeSchema, type NewBridgeInput } from '@/lib/validation/api';
import { CopyButton } from '@/app/components/copy-button';
import { Panel, td, th } from './panel';

type Bridge = {
  id: string;
  name: string;
  tokenHint: string;
  createdAt: string;
  revokedAt: string | null;
  lastSeenAt: string | null;
  lastHeartbeat: { spoolDepth?: number; bridgeVersion?: string } | null;
};

export function BridgesPanel() {
  const { data, mutate } = useSWR<{ bridges: Bridge[] }>('/api/admin/bridges', fetcher, { refreshInterval: 30_000 });
  const [issued, setIssued] = useState<{ name: string; token: string } | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, reset, formState } = useForm<NewBridgeInput>({ resolver: zodResolver(newBridgeSchema) });

  const create = handleSubmit(async (values) => {
    setFailure(null);
    try {
      const result = await send<{ bridge: Bridge; token: string }>('/api/admin/bridges', 'POST', values);
      setIssued({ name: result.bridge.name, token: result.token });
      reset({ name: '' });
      await mutate();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not create.');
    }
  });

  const revoke = async (bridge: Bridge) => {
    if (!confirm(`Revoke the token of “${bridge.name}”? That bridge stops delivering until it gets a new token.`)) return;
    try {
      await send(`/api/admin/bridges/${bridge.id}/revoke`, 'POST');
      await mutate();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not revoke.');
    }
  };

  return (
    <Panel id="bridges" title="Bridges" intro="The program on each lab PC that reads the analyzers’ cables. Each has its own token, which can only deliver readings.">
      {failure && <div className="mb-3"><Notice tone="error">{failure}</Notice></div>}
      {issued && (
        <div className="mb-4 rounded-lg border border-signal-500 bg-signal-100 p-3 text-sm">
          <p className="font-semibold">Token for {issued.name}: copy it now, it is shown only once.</p>
          <code className="mt-1 block break-all rounded bg-white p-2 font-mono text-xs" data-testid="issued-token">{issued.token}</code>
          <div className="mt-2"><CopyButton text={issued.token} label="Copy token" /></div>
          <p className="mt-1 text-ink-700">On the lab PC: <code className="font-mono">BENCHWIRE_BRIDGE_TOKEN=… npm run bridge -- run …</code></p>
          <button type="button" className={`${buttonClass.quiet} mt-2`} onClick={() => setIssued(null)}>I have stored it</button>
        </div>
      )}
      <div className="relative mb-5 overflow-x-auto">
      <table className="min-w-full divide-y divide-ink-100 text-sm">
        <thead>
          <tr>
            <th scope="col" className={th}>Name</th>
            <th scope="col" className={th}>Token</th>
            <th scope="col" className={th}>Last seen</th>
            <th scope="col" className={th}>Waiting in spool</th>
            <th scope="col" className={th}><span className="sr-only">Actions</span></th>
          </tr>
        </thead>
        <tbody className="divide-y divide-ink-100">
          {data?.bridges.map((b) => (
            <tr key={b.id} className={b.revokedAt ? 'text-ink-500' : undefined}>
              <td className={td}>{b.name}</td>
              <td className={`${td} font-mono`}>{b.tokenHint}…{b.revokedAt && ` (revoked ${formatDateTime(b.revokedAt)})`}</td>
              <td className={td} title={formatDateTime(b.lastSeenAt)}>{b.lastSeenAt ? timeAgo(b.lastSeenAt) : 'never'}</td>
              <td className={td}>{b.lastHeartbeat?.spoolDepth ?? '—'}</td>
              <td className={`${td} text-right`}>
                {!b.revokedAt && (
                  <button type="button" className={buttonClass.danger} onClick={() => revoke(b)}>Revoke</button>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      </div>
      <form onSubmit={create} noValidate className="flex flex-wrap items-end gap-3">
        <div className="w-72">
          <Field id="bridge-name" label="New bridge name" error={formState.errors.name?.message}>
            <input id="bridge-name" className={inputClass} placeholder="Lab PC (bench 2)" {...register('name')} />
          </Field>
        </div>
        <button type="submit" className={buttonClass.primary} disabled={formState.isSubmitting}>Create bridge and token</button>
      </form>
    </Panel>
  );
}
