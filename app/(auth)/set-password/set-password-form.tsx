'use client';
import Link from 'next/link';
import { useSearchParams } from 'next/navigation';
import { useState } from 'react';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';

export function SetPasswordForm() {
  const token = useSearchParams().get('token') ?? '';
  const [password, setPassword] = useState('');
  const [done, setDone] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  if (done) {
    return (
      <Notice tone="ok">
        Your password is set. <Link href="/sign-in" className="underline">Sign in</Link>
      </Notice>
    );
  }
  return (
    <form
      className="space-y-4"
      onSubmit={async (e) => {
        e.preventDefault();
        setFailure(null);
        try {
          await send('/api/auth/set-password', 'POST', { token, password });
          setDone(true);
        } catch (error) {
          setFailure(error instanceof Error ? error.message : 'Could not set the password.');
        }
      }}
    >
      {!token && <Notice tone="error">This page needs the link from your e-mail.</Notice>}
      <Field id="new-password" label="New password" hint="At least 12 characters." error={failure ?? undefined}>
        <input id="new-password" type="password" autoComplete="new-password" className={inputClass} minLength={12} required value={password} onChange={(e) => setPassword(e.target.value)} />
      </Field>
      <button type="submit" className={buttonClass.primary} disabled={!token}>
        Set password
      </button>
    </form>
  );
}
