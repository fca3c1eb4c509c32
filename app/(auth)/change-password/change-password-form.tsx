'use client';
import { useRouter } from 'next/navigation';
import { useState } from 'react';
import { useForm, type FieldPath } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, send } from '@/lib/client/fetcher';
import { changeOwnPasswordSchema, type ChangeOwnPasswordInput } from '@/lib/validation/api';

export function ChangePasswordForm() {
  const router = useRouter();
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, setError, formState } = useForm<ChangeOwnPasswordInput>({ resolver: zodResolver(changeOwnPasswordSchema) });
  const { errors, isSubmitting } = formState;
  const onSubmit = handleSubmit(async (values) => {
    setFailure(null);
    try {
      await send('/api/auth/password', 'POST', values);
      router.replace('/intake');
      router.refresh();
    } catch (error) {
      if (error instanceof ApiClientError) for (const i of error.issues) setError(i.path as FieldPath<ChangeOwnPasswordInput>, { message: i.message });
      setFailure(error instanceof Error ? error.message : 'Could not change the password.');
    }
  });
  const field = (name: keyof ChangeOwnPasswordInput, label: string, autoComplete: string) => (
    <Field id={`pw-${name}`} label={label} error={errors[name]?.message}>
      <input
        id={`pw-${name}`}
        type="password"
        autoComplete={autoComplete}
        className={inputClass}
        aria-invalid={Boolean(errors[name])}
        aria-describedby={errors[name] ? `pw-${name}-error` : undefined}
        {...register(name)}
      />
    </Field>
  );
  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4">
      {failure && <Notice tone="error">{failure}</Notice>}
      {field('currentPassword', 'Current (temporary) password', 'current-password')}
      {field('newPassword', 'New password (at least 12 characters)', 'new-password')}
      {field('confirmPassword', 'New password again', 'new-password')}
      <button type="submit" className={`${buttonClass.primary} w-full`} disabled={isSubmitting}>
        {isSubmitting ? 'Saving…' : 'Save my new password'}
      </button>
    </form>
  );
}
