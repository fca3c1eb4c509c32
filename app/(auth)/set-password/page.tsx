import type { Metadata } from 'next';
import { Suspense } from 'react';
import { SetPasswordForm } from './set-password-form';

export const metadata: Metadata = { title: 'Choose a password' };

export default function SetPasswordPage() {
  return (
    <>
      <h1 className="mb-4 text-lg font-semibold text-ink-950">Choose a password</h1>
      {/* The form reads the token from the URL (useSearchParams), which needs a Suspense boundary. */}
      <Suspense>
        <SetPasswordForm />
      </Suspense>
    </>
  );
}
