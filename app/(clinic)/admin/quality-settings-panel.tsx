'use client';
// The clinic's lab-quality settings: which sample IDs are QC runs, when a silent bridge counts as offline,
// how early a kit lot's expiry is warned about. The handler's zod schema checks the form, so the QC
// pattern is refused here for the same reason the server would refuse it (RE2: no backreferences or lookaround).
import { zodResolver } from '@hookform/resolvers/zod';
import { useEffect, useState } from 'react';
import { useForm } from 'react-hook-form';
import useSWR from 'swr';
import type { z } from 'zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, fetcher, send } from '@/lib/client/fetcher';
import { qualitySettingsSchema, type QualitySettings } from '@/lib/validation/quality';
import { Panel } from './panel';

type FormInput = z.input<typeof qualitySettingsSchema>;
const FIELDS = ['qcSampleIdPattern', 'bridgeOfflineMinutes', 'kitWarnDays'] as const;

export function QualitySettingsPanel() {
  const { data, error, mutate } = useSWR<{ settings: QualitySettings }>('/api/quality/settings', fetcher);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const { register, handleSubmit, reset, setError, formState } = useForm<FormInput, unknown, QualitySettings>({
    resolver: zodResolver(qualitySettingsSchema),
    mode: 'onBlur',
  });
  const { errors, isSubmitting, isDirty } = formState;
  useEffect(() => {
    if (data) reset(data.settings);
  }, [data, reset]);

  const save = handleSubmit(async (values) => {
    setMessage(null);
    try {
      const saved = await send<{ settings: QualitySettings }>('/api/quality/settings', 'PATCH', values);
      reset(saved.settings);
      void mutate(saved, { revalidate: false });
      setMessage({ tone: 'ok', text: 'Lab-quality settings saved.' });
    } catch (failure) {
      const named = failure instanceof ApiClientError ? failure.issues.filter((i) => (FIELDS as readonly string[]).includes(i.path)) : [];
      for (const issue of named) setError(issue.path as (typeof FIELDS)[number], { message: issue.message });
      if (!named.length) setMessage({ tone: 'error', text: failure instanceof Error ? failure.message : 'Could not save.' });
    }
  });

  return (
    <Panel
      id="quality-settings"
      title="Lab-quality settings"
      intro="A reading whose sample ID matches the QC pattern is a control run: it goes to the QC page and can never be put on a patient. A bridge without a heartbeat for the offline time is shown offline to administrators. Kit lots are warned about this many days before they expire."
    >
      {error && <Notice tone="error">Could not load the settings: {error.message}</Notice>}
      {message && (
        <div className="mb-3">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      {data && (
        <form onSubmit={save} noValidate className="grid gap-3 sm:grid-cols-3" aria-label="Lab-quality settings">
          <Field
            id="qc-sample-id-pattern"
            label="QC sample-ID pattern"
            hint="A regular expression in RE2 syntax, compared without regard to capitals; ^QC means IDs starting with QC. Empty: no sample ID marks QC."
            error={errors.qcSampleIdPattern?.message}
          >
            <input
              id="qc-sample-id-pattern"
              className={`${inputClass} font-mono`}
              spellCheck={false}
              autoComplete="off"
              aria-invalid={!!errors.qcSampleIdPattern}
              aria-describedby={errors.qcSampleIdPattern ? 'qc-sample-id-pattern-error' : 'qc-sample-id-pattern-hint'}
              {...register('qcSampleIdPattern')}
            />
          </Field>
          <Field id="bridge-offline-minutes" label="Bridge offline after (minutes)" hint="1–1440." error={errors.bridgeOfflineMinutes?.message}>
            <input
              id="bridge-offline-minutes"
              type="number"
              inputMode="numeric"
              min={1}
              max={1440}
              className={inputClass}
              aria-invalid={!!errors.bridgeOfflineMinutes}
              {...register('bridgeOfflineMinutes', { valueAsNumber: true })}
            />
          </Field>
          <Field id="kit-warn-days" label="Warn before kit expiry (days)" hint="0–365." error={errors.kitWarnDays?.message}>
            <input
              id="kit-warn-days"
              type="number"
              inputMode="numeric"
              min={0}
              max={365}
              className={inputClass}
              aria-invalid={!!errors.kitWarnDays}
              {...register('kitWarnDays', { valueAsNumber: true })}
            />
          </Field>
          <div className="sm:col-span-3">
            <button type="submit" className={buttonClass.primary} disabled={isSubmitting || !isDirty} data-testid="save-quality-settings">
              {isSubmitting ? 'Saving…' : 'Save lab-quality settings'}
            </button>
          </div>
        </form>
      )}
    </Panel>
  );
}
