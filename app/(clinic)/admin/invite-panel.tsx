'use client';
// Invite a staff member by e-mail: they choose their own password from a single-use link (72 hours).
// Invitations not accepted yet are listed here, apart from the staff, with resend and revoke.
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { ROLES, roleLabel } from '@/lib/auth/roles';
import type { StaffRole as Role } from '@/db/schema';
import { formatDateTime } from '@/lib/format';
import { Panel, td, th } from './panel';
import { ConfirmDialog } from './staff-dialogs';

type Invitation = {
  id: string;
  displayName: string;
  email: string;
  role: Role;
  invitedAt: string;
  invitedBy: string | null;
  expiresAt: string;
  revokedAt: string | null;
  state: 'waiting' | 'expired' | 'revoked';
};

const STATE_TEXT: Record<Invitation['state'], (i: Invitation) => string> = {
  waiting: (i) => `until ${formatDateTime(i.expiresAt)}`,
  expired: (i) => `expired ${formatDateTime(i.expiresAt)}`,
  revoked: (i) => `revoked ${formatDateTime(i.revokedAt)}`,
};

export function InvitePanel() {
  const { data, mutate } = useSWR<{ invitations: Invitation[] }>('/api/admin/staff/invitations', fetcher);
  const [displayName, setDisplayName] = useState('');
  const [email, setEmail] = useState('');
  const [role, setRole] = useState<Role>('veterinarian');
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const [pending, setPending] = useState<{ kind: 'resend' | 'revoke'; invitation: Invitation } | null>(null);
  const invitations = data?.invitations ?? [];
  return (
    <Panel id="invite" title="Invite by e-mail" intro="The person gets a link to choose their own password; it works once, for 72 hours.">
      {message && (
        <div className="mb-3">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      <h3 className="mb-2 text-sm font-semibold">Pending invitations</h3>
      {invitations.length === 0 ? (
        <p className="mb-5 text-sm text-ink-500">No invitation is waiting for an answer.</p>
      ) : (
        <table className="mb-5 min-w-full divide-y divide-ink-100 text-sm" aria-label="Pending invitations">
          <thead>
            <tr>
              <th scope="col" className={th}>Name</th>
              <th scope="col" className={th}>E-mail</th>
              <th scope="col" className={th}>Role</th>
              <th scope="col" className={th}>Invited by</th>
              <th scope="col" className={th}>Link</th>
              <th scope="col" className={th}><span className="sr-only">Actions</span></th>
            </tr>
          </thead>
          <tbody className="divide-y divide-ink-100">
            {invitations.map((i) => (
              <tr key={i.id} className={i.state === 'waiting' ? undefined : 'text-ink-500'}>
                <td className={td}>{i.displayName}</td>
                <td className={td}>{i.email}</td>
                <td className={td}>{roleLabel[i.role]}</td>
                <td className={td}>
                  {i.invitedBy ?? 'a former administrator'}, {formatDateTime(i.invitedAt)}
                </td>
                <td className={td}>{STATE_TEXT[i.state](i)}</td>
                <td className={`${td} text-right`}>
                  <span className="inline-flex flex-wrap justify-end gap-x-3 gap-y-1">
                    <button type="button" className={buttonClass.quiet} onClick={() => setPending({ kind: 'resend', invitation: i })}>
                      Send again…
                    </button>
                    {i.state !== 'revoked' && (
                      <button type="button" className={buttonClass.quiet} onClick={() => setPending({ kind: 'revoke', invitation: i })}>
                        Revoke…
                      </button>
                    )}
                  </span>
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
      {pending?.kind === 'resend' && (
        <ConfirmDialog
          title={`Send ${pending.invitation.displayName} a new link?`}
          confirmLabel="Send new link"
          onClose={() => setPending(null)}
          onConfirm={async () => {
            await send(`/api/admin/staff/${pending.invitation.id}/invitation/resend`, 'POST');
            setMessage({ tone: 'ok', text: `A new invitation is queued for ${pending.invitation.email}.` });
            await mutate();
          }}
        >
          <p>
            A new link goes to {pending.invitation.email}, valid for 72 hours. Any link sent before stops working.
          </p>
        </ConfirmDialog>
      )}
      {pending?.kind === 'revoke' && (
        <ConfirmDialog
          title={`Revoke ${pending.invitation.displayName}’s invitation?`}
          confirmLabel="Revoke"
          danger
          onClose={() => setPending(null)}
          onConfirm={async () => {
            await send(`/api/admin/staff/${pending.invitation.id}/invitation/revoke`, 'POST');
            setMessage({ tone: 'ok', text: `The link sent to ${pending.invitation.email} no longer works.` });
            await mutate();
          }}
        >
          <p>The link already sent stops working. The invitation stays listed as revoked; you can send a new one later.</p>
        </ConfirmDialog>
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
            await mutate();
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
          <select className={inputClass} value={role} onChange={(e) => setRole(e.target.value as Role)}>
            {ROLES.map((r) => (
              <option key={r} value={r}>{roleLabel[r]}</option>
            ))}
          </select>
        </label>
        <button type="submit" className={buttonClass.primary}>
          Send invitation
        </button>
      </form>
    </Panel>
  );
}
