// Small shared pieces of Benchwire's look. Plain Tailwind classes; no component library.
import type { ComponentProps, ReactNode } from 'react';
import { CLINICAL_CAUTION_TEXT } from '@/lib/format';

export const buttonClass = {
  primary:
    'inline-flex items-center justify-center gap-2 rounded-md bg-ink-800 px-4 py-2 text-sm font-semibold text-white shadow-sm hover:bg-ink-700 disabled:cursor-not-allowed disabled:opacity-50',
  secondary:
    'inline-flex items-center justify-center gap-2 rounded-md border border-ink-300 bg-white px-4 py-2 text-sm font-medium text-ink-900 hover:bg-ink-100 disabled:cursor-not-allowed disabled:opacity-50',
  danger:
    'inline-flex items-center justify-center gap-2 rounded-md border border-alarm-700 bg-white px-3 py-1.5 text-sm font-medium text-alarm-700 hover:bg-alarm-100 disabled:opacity-50',
  quiet: 'text-sm font-medium text-ink-700 underline-offset-2 hover:underline',
};

export const inputClass =
  'block w-full rounded-md border border-ink-300 bg-white px-3 py-2 text-sm text-ink-950 placeholder:text-ink-500 focus:border-ink-700 aria-[invalid=true]:border-alarm-700';

export function Field({
  id,
  label,
  hint,
  error,
  children,
}: {
  id: string;
  label: string;
  hint?: string;
  error?: string;
  children: ReactNode;
}) {
  return (
    <div className="space-y-1">
      <label htmlFor={id} className="block text-sm font-medium text-ink-900">
        {label}
      </label>
      {children}
      {hint && !error && (
        <p id={`${id}-hint`} className="text-xs text-ink-500">
          {hint}
        </p>
      )}
      {error && (
        <p id={`${id}-error`} role="alert" className="text-xs font-medium text-alarm-700">
          {error}
        </p>
      )}
    </div>
  );
}

export function Notice({ tone = 'info', children, ...rest }: { tone?: 'info' | 'error' | 'ok' } & ComponentProps<'div'>) {
  const tones = {
    info: 'border-ink-300 bg-ink-100 text-ink-900',
    error: 'border-alarm-700/40 bg-alarm-100 text-alarm-700',
    ok: 'border-moss-700/40 bg-moss-100 text-moss-700',
  };
  return (
    <div role={tone === 'error' ? 'alert' : 'status'} className={`rounded-md border px-3 py-2 text-sm ${tones[tone]}`} {...rest}>
      {children}
    </div>
  );
}

export function BrandMark({ className = 'h-7 w-7' }: { className?: string }) {
  return (
    <svg viewBox="0 0 32 32" aria-hidden="true" className={className}>
      <rect width="32" height="32" rx="7" fill="currentColor" className="text-ink-900" />
      <path d="M5 19h6l3-8 4 12 3-7h6" fill="none" stroke="#e58a12" strokeWidth="2.6" strokeLinecap="round" strokeLinejoin="round" />
    </svg>
  );
}

export function PageHeader({ title, children }: { title: string; children?: ReactNode }) {
  return (
    <div className="mb-6 flex flex-wrap items-end justify-between gap-3">
      <h1 className="text-2xl font-semibold tracking-tight text-ink-950">{title}</h1>
      {children}
    </div>
  );
}

/** The cautions every screen that shows results carries. */
export function ClinicalCaution() {
  return (
    <p className="text-xs leading-relaxed text-ink-500">{CLINICAL_CAUTION_TEXT}</p>
  );
}
