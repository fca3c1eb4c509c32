'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { signInSchema, type SignInInput } from '@/lib/validation/api';

export function SignInForm() {
  const router = useRouter();
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, formState } = useForm<SignInInput>({ resolver: zodResolver(signInSchema) });
  const { errors, isSubmitting } = formState;

  const onSubmit = handleSubmit(async (values) => {
    setFailure(null);
    try {
      const { user } = await send<{ user: { mustChangePassword: boolean } }>('/api/auth/sign-in', 'POST', values);
      router.replace(user.mustChangePassword ? '/change-password' : '/intake');
      router.refresh();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Sign-in failed.');
    }
  });

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4">
      {failure && (
        <Notice tone="error" data-testid="sign-in-error">
          {failure}
        </Notice>
      )}
      <Field id="email" label="E-mail" error={errors.email?.message}>
        <input
          id="email"
          type="email"
          autoComplete="username"
          autoFocus
          className={inputClass}
          aria-invalid={!!errors.email}
          aria-describedby={errors.email ? 'email-error' : undefined}
          {...register('email')}
        />
      </Field>
      <Field id="password" label="Password" error={errors.password?.message}>
        <input
          id="password"
          type="password"
          autoComplete="current-password"
          className={inputClass}
          aria-invalid={!!errors.password}
          aria-describedby={errors.password ? 'password-error' : undefined}
          {...register('password')}
        />
      </Field>
      <button type="submit" className={`${buttonClass.primary} w-full`} disabled={isSubmitting}>
        {isSubmitting ? 'Signing in…' : 'Sign in'}
      </button>
    </form>
  );
}
