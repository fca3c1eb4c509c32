import type { Metadata } from 'next';
import Link from 'next/link';
import { currentActor } from '@/lib/auth/current';
import { SignOutForm } from './sign-out-form';

export const metadata: Metadata = { title: 'Sign out' };
export const dynamic = 'force-dynamic';

/** A page of its own, so a shared lab PC can be left signed out from a bookmark; the change itself is a POST. */
export default async function SignOutPage() {
  const actor = await currentActor();
  if (!actor) {
    return (
      <>
        <h1 className="mb-2 text-lg font-semibold text-ink-950">You are signed out</h1>
        <p className="mb-4 text-sm text-ink-700">Nobody is signed in on this browser.</p>
        <Link href="/sign-in" className="text-sm font-medium text-ink-800 underline">Sign in</Link>
      </>
    );
  }
  return (
    <>
      <h1 className="mb-2 text-lg font-semibold text-ink-950">Sign out</h1>
      <p className="mb-4 text-sm text-ink-700">
        Signed in as {actor.displayName}. Signing out ends this session on the server too.
      </p>
      <SignOutForm />
    </>
  );
}
