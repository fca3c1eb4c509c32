'use client';
import { useRouter } from 'next/navigation';
import { send } from '@/lib/client/fetcher';

export function SignOutButton() {
  const router = useRouter();
  return (
    <button
      type="button"
      className="rounded-md border border-ink-500 px-3 py-1 text-sm text-ink-100 hover:bg-ink-800"
      onClick={async () => {
        await send('/api/auth/sign-out', 'POST').catch(() => {});
        router.replace('/sign-in?signedOut=1');
        router.refresh();
      }}
    >
      Sign out
    </button>
  );
}
