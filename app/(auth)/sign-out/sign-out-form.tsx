'use client';
import { useRouter } from 'next/navigation';
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';

export function SignOutForm() {
  const router = useRouter();
  const [busy, setBusy] = useState(false);
  return (
    <form
      onSubmit={async (e) => {
        e.preventDefault();
        setBusy(true);
        await send('/api/auth/sign-out', 'POST').catch(() => {});
        router.replace('/sign-in?signedOut=1');
        router.refresh();
      }}
    >
      <button type="submit" autoFocus className={`${buttonClass.primary} w-full`} disabled={busy}>
        {busy ? 'Signing out…' : 'Sign out'}
      </button>
    </form>
  );
}
