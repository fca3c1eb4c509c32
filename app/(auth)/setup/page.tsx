import type { Metadata } from 'next';
import { redirect } from 'next/navigation';
import { clinicCount } from '@/lib/staff';
import { SetupForm } from './setup-form';

export const metadata: Metadata = { title: 'Set up your clinic' };
export const dynamic = 'force-dynamic';

export default async function SetupPage() {
  if ((await clinicCount()) > 0) redirect('/sign-in');
  return (
    <>
      <h1 className="mb-1 text-lg font-semibold text-ink-950">Set up your clinic</h1>
      <p className="mb-4 text-sm text-ink-700">
        This Benchwire has no clinic yet. Create it and its first administrator; after that, administrators add staff.
      </p>
      <SetupForm />
    </>
  );
}
