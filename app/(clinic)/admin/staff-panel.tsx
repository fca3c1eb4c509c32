'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { ROLES, roleLabel } from '@/lib/auth/roles';
import { formatDateTime } from '@/lib/format';
import { newStaffSchema, type NewStaffInput } from '@/lib/validation/api';
import { Panel, td, th } from './panel';
import { ConfirmDialog, TemporaryPasswordDialog } from './staff-dialogs';

type Staff = {
  id: string;
  email: string;
  displayName: string;
  role: NewStaffInput['role'];
  active: boolean;
  mustChangePassword: boolean;
  lastSignInAt: string | null;
};

export function StaffPanel({ selfId }: { selfId: string }) {
  const { data, mutate } = useSWR<{ staff: Staff[] }>('/api/admin/staff', fetcher);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const { register, handleSubmit, reset, formState } = useForm<NewStaffInput>({
    resolver: zodResolver(newStaffSchema),
    defaultValues: { role: 'technician' },
  });
  const { errors, isSubmitting } = formState;

  const add = handleSubmit(async (values) => {
    try {
      await send('/api/admin/staff', 'POST', values);
      setMessage({ tone: 'ok', text: `${values.displayName} can now sign in.` });
      reset({ role: values.role, displayName: '', email: '', password: '' });
      await mutate();
    } catch (error) {
      setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not add.' });
    }
  });

  const [pending, setPending] = useState<
    { kind: 'deactivate' | 'reactivate'; person: Staff } | { kind: 'role'; person: Staff; role: Staff['role'] } | { kind: 'password'; person: Staff } | null
  >(null);
  const patch = async (person: Staff, change: { active?: boolean; role?: Staff['role'] }, done: string) => {
    await send(`/api/admin/staff/${person.id}`, 'PATCH', change);
    setMessage({ tone: 'ok', text: done });
    await mutate();
  };

  return (
    <Panel id="staff" title="Staff" intro="Everyone who signs in. Roles decide what each person may do; deactivated staff cannot sign in.">
      {message && <div className="mb-3"><Notice tone={message.tone}>{message.text}</Notice></div>}
      <div className="relative mb-5 overflow-x-auto">
      <table className="min-w-full divide-y divide-ink-100 text-sm">
        <thead>
          <tr>
            <th scope="col" className={th}>Name</th>
            <th scope="col" className={th}>E-mail</th>
            <th scope="col" className={th}>Role</th>
            <th scope="col" className={th}>Last sign-in</th>
            <th scope="col" className={th}><span className="sr-only">Actions</span></th>
          </tr>
        </thead>
        <tbody className="divide-y divide-ink-100">
          {data?.staff.map((p) => (
            <tr key={p.id} className={p.active ? undefined : 'text-ink-500'}>
              <td className={td}>{p.displayName}{!p.active && ' (deactivated)'}</td>
              <td className={td}>{p.email}</td>
              <td className={td}>
                {p.id === selfId || !p.active ? (
                  roleLabel[p.role]
                ) : (
                  <select
                    aria-label={`Role of ${p.displayName}`}
                    className={`${inputClass} w-auto py-1`}
                    value={p.role}
                    onChange={(e) => setPending({ kind: 'role', person: p, role: e.target.value as Staff['role'] })}
                  >
                    {ROLES.map((r) => (
                      <option key={r} value={r}>{roleLabel[r]}</option>
                    ))}
                  </select>
                )}
                {p.mustChangePassword && <span className="block text-xs text-signal-600">temporary password</span>}
              </td>
              <td className={td}>{formatDateTime(p.lastSignInAt)}</td>
              <td className={`${td} text-right`}>
                {p.id !== selfId && (
                  <span className="inline-flex flex-wrap justify-end gap-x-3 gap-y-1">
                    {p.active && (
                      <button type="button" className={buttonClass.quiet} onClick={() => setPending({ kind: 'password', person: p })}>
                        Temporary password…
                      </button>
                    )}
                    <button type="button" className={buttonClass.quiet} onClick={() => setPending({ kind: p.active ? 'deactivate' : 'reactivate', person: p })}>
                      {p.active ? 'Deactivate…' : 'Reactivate…'}
                    </button>
                  </span>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      </div>
      {pending?.kind === 'deactivate' && (
        <ConfirmDialog
          title={`Deactivate ${pending.person.displayName}?`}
          confirmLabel="Deactivate"
          danger
          onClose={() => setPending(null)}
          onConfirm={() => patch(pending.person, { active: false }, `${pending.person.displayName} can no longer sign in.`)}
        >
          <p>
            {pending.person.displayName} ({pending.person.email}) is signed out everywhere and can no longer sign in. Their name stays on
            everything they did. You can reactivate them later.
          </p>
        </ConfirmDialog>
      )}
      {pending?.kind === 'reactivate' && (
        <ConfirmDialog
          title={`Reactivate ${pending.person.displayName}?`}
          confirmLabel="Reactivate"
          onClose={() => setPending(null)}
          onConfirm={() => patch(pending.person, { active: true }, `${pending.person.displayName} can sign in again.`)}
        >
          <p>They can sign in again with their password, as {roleLabel[pending.person.role]}.</p>
        </ConfirmDialog>
      )}
      {pending?.kind === 'role' && (
        <ConfirmDialog
          title={`Change ${pending.person.displayName}’s role?`}
          confirmLabel={`Make ${roleLabel[pending.role]}`}
          onClose={() => setPending(null)}
          onConfirm={() => patch(pending.person, { role: pending.role }, `${pending.person.displayName} is now ${roleLabel[pending.role]}.`)}
        >
          <p>
            From {roleLabel[pending.person.role]} to {roleLabel[pending.role]}: what they may do changes at their next request.
          </p>
        </ConfirmDialog>
      )}
      {pending?.kind === 'password' && (
        <TemporaryPasswordDialog
          person={pending.person}
          onClose={(saved) => {
            setPending(null);
            if (saved) void mutate();
          }}
        />
      )}
      <form onSubmit={add} noValidate className="grid gap-3 sm:grid-cols-2 lg:grid-cols-5 lg:items-end">
        <Field id="staff-name" label="Name" error={errors.displayName?.message}>
          <input id="staff-name" className={inputClass} aria-invalid={!!errors.displayName} {...register('displayName')} />
        </Field>
        <Field id="staff-email" label="E-mail" error={errors.email?.message}>
          <input id="staff-email" type="email" className={inputClass} aria-invalid={!!errors.email} {...register('email')} />
        </Field>
        <Field id="staff-role" label="Role" error={errors.role?.message}>
          <select id="staff-role" className={inputClass} {...register('role')}>
            {ROLES.map((r) => (
              <option key={r} value={r}>{roleLabel[r]}</option>
            ))}
          </select>
        </Field>
        <Field id="staff-password" label="First password" error={errors.password?.message}>
          <input id="staff-password" type="password" autoComplete="new-password" className={inputClass} aria-invalid={!!errors.password} {...register('password')} />
        </Field>
        <button type="submit" className={buttonClass.primary} disabled={isSubmitting}>Add staff member</button>
      </form>
    </Panel>
  );
}
