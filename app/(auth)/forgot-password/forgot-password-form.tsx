'use client';
import { useState } from 'react';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';

export function ForgotPasswordForm() {
  const [email, setEmail] = useState('');
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  return (
    <form
      className="space-y-4"
      onSubmit={async (e) => {
        e.preventDefault();
        try {
          const result = await send<{ message: string }>('/api/auth/password-reset', 'POST', { email });
          setMessage({ tone: 'ok', text: result.message });
        } catch (error) {
          setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not send.' });
        }
      }}
    >
      {message && <Notice tone={message.tone}>{message.text}</Notice>}
      <Field id="reset-email" label="E-mail address">
        <input id="reset-email" type="email" autoComplete="email" className={inputClass} required value={email} onChange={(e) => setEmail(e.target.value)} />
      </Field>
      <button type="submit" className={buttonClass.primary}>
        Send a reset link
      </button>
    </form>
  );
}
