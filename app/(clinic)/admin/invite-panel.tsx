'use client';
// Invite a staff member by e-mail: they choose their own password from a single-use link (72 hours).
import { useState } from 'react';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { Panel } from './panel';

export function InvitePanel() {
  const [displayName, setDisplayName] = useState('');
  const [email, setEmail] = useState('');
  const [role, setRole] = useState('veterinarian');
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  return (
    <Panel id="invite" title="Invite by e-mail" intro="The person gets a link to choose their own password; it works once, for 72 hours.">
      {message && (
        <div className="mb-3">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      <form
        className="flex flex-wrap items-end gap-3 text-sm"
        onSubmit={async (e) => {
          e.preventDefault();
          setMessage(null);
          try {
            await send('/api/admin/staff/invite', 'POST', { displayName, email, role });
            setMessage({ tone: 'ok', text: `Invitation queued for ${email}.` });
            setDisplayName('');
            setEmail('');
          } catch (error) {
            setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not invite.' });
          }
        }}
      >
        <label className="block">
          <span className="font-medium">Name</span>
          <input className={inputClass} required minLength={2} value={displayName} onChange={(e) => setDisplayName(e.target.value)} />
        </label>
        <label className="block">
          <span className="font-medium">E-mail</span>
          <input className={inputClass} type="email" required value={email} onChange={(e) => setEmail(e.target.value)} />
        </label>
        <label className="block">
          <span className="font-medium">Role</span>
          <select className={inputClass} value={role} onChange={(e) => setRole(e.target.value)}>
            <option value="veterinarian">Veterinarian</option>
            <option value="technician">Veterinary technician</option>
            <option value="admin">Administrator</option>
          </select>
        </label>
        <button type="submit" className={buttonClass.primary}>
          Send invitation
        </button>
      </form>
    </Panel>
  );
}
