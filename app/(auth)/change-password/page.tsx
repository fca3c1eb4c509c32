import type { Metadata } from 'next';
import { redirect } from 'next/navigation';
import { currentActor } from '@/lib/auth/current';
import { mustChangePassword } from '@/lib/staff';
import { Notice } from '@/app/components/ui';
import { ChangePasswordForm } from './change-password-form';

export const metadata: Metadata = { title: 'Choose a new password' };
export const dynamic = 'force-dynamic';

export default async function ChangePasswordPage() {
  const actor = await currentActor();
  if (!actor) redirect('/sign-in');
  const required = await mustChangePassword(actor.userId);
  return (
    <>
      <h1 className="mb-4 text-lg font-semibold text-ink-950">Choose a new password</h1>
      {required && (
        <div className="mb-4">
          <Notice tone="info">An administrator gave you a temporary password. Choose your own before you continue.</Notice>
        </div>
      )}
      <ChangePasswordForm />
    </>
  );
}
