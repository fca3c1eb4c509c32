import type { Metadata } from 'next';
import Link from 'next/link';
import { redirect } from 'next/navigation';
import { currentActor } from '@/lib/auth/current';
import { clinicCount } from '@/lib/staff';
import { Notice } from '@/app/components/ui';
import { SignInForm } from './sign-in-form';

export const metadata: Metadata = { title: 'Sign in' };
export const dynamic = 'force-dynamic';

export default async function SignInPage({ searchParams }: { searchParams: Promise<{ signedOut?: string }> }) {
  const { signedOut } = await searchParams;
  if ((await clinicCount()) === 0) redirect('/setup');
  if (await currentActor()) redirect('/intake');
  return (
    <>
      <h1 className="mb-4 text-lg font-semibold text-ink-950">Sign in</h1>
      {signedOut && (
        <div className="mb-4">
          <Notice tone="ok">You are signed out.</Notice>
        </div>
      )}
      <SignInForm />
      <p className="mt-4 text-sm">
        <Link href="/forgot-password" className="text-ink-700 underline-offset-2 hover:underline">
          Forgot your password?
        </Link>
      </p>
    </>
  );
}
