'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { setupSchema } from '@/lib/validation/api';

type SetupForm = z.input<typeof setupSchema>;

export function SetupForm() {
  const router = useRouter();
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, formState } = useForm<SetupForm>({
    resolver: zodResolver(setupSchema),
    defaultValues: { timeZone: Intl.DateTimeFormat().resolvedOptions().timeZone },
  });
  const { errors, isSubmitting } = formState;
  const field = (name: keyof SetupForm) => ({
    id: name,
    className: inputClass,
    'aria-invalid': !!errors[name],
    'aria-describedby': errors[name] ? `${name}-error` : undefined,
    ...register(name),
  });

  const onSubmit = handleSubmit(async (values) => {
    setFailure(null);
    try {
      await send('/api/setup', 'POST', values);
      router.replace('/admin');
      router.refresh();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Setup failed.');
    }
  });

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4">
      {failure && <Notice tone="error">{failure}</Notice>}
      <Field id="clinicName" label="Clinic name" error={errors.clinicName?.message}>
        <input autoFocus {...field('clinicName')} />
      </Field>
      <Field id="timeZone" label="Time zone" hint="Used to show times as the clinic reads them." error={errors.timeZone?.message}>
        <input {...field('timeZone')} />
      </Field>
      <Field id="displayName" label="Your name" error={errors.displayName?.message}>
        <input autoComplete="name" {...field('displayName')} />
      </Field>
      <Field id="email" label="Your e-mail" error={errors.email?.message}>
        <input type="email" autoComplete="username" {...field('email')} />
      </Field>
      <Field id="password" label="Password" hint="At least 12 characters." error={errors.password?.message}>
        <input type="password" autoComplete="new-password" {...field('password')} />
      </Field>
      <button type="submit" className={`${buttonClass.primary} w-full`} disabled={isSubmitting}>
        {isSubmitting ? 'Creating…' : 'Create clinic and administrator'}
      </button>
    </form>
  );
}
