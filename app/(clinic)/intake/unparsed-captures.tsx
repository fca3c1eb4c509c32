'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm, useWatch } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import type { CaptureView } from '@/lib/readings/queries';
import { dismissCaptureSchema, transcribeCaptureSchema } from '@/lib/validation/api';

type Capture = Omit<CaptureView, 'receivedAt'> & { receivedAt: string };

/**
 * Text an instrument sent that did not become a reading. A person reads it against the slip or display and
 * either types the result in (it then waits in Intake like any reading) or dismisses it with a reason.
 */
export function UnparsedCaptures({ onDone }: { onDone: (message: string) => void }) {
  const { data, mutate } = useSWR<{ captures: Capture[] }>('/api/captures?status=open', fetcher, { refreshInterval: 60_000 });
  const [transcribing, setTranscribing] = useState<Capture | null>(null);
  const [dismissing, setDismissing] = useState<Capture | null>(null);
  const close = (message?: string) => {
    setTranscribing(null);
    setDismissing(null);
    if (message) onDone(message);
    void mutate();
  };

  return (
    <section aria-labelledby="captures-heading">
      <h2 id="captures-heading" className="mb-1 text-lg font-semibold text-ink-900">
        Unparsed captures
      </h2>
      <p className="mb-3 text-sm text-ink-700">
        Text an instrument sent that did not form a reading. It is kept exactly as received; read it against the
        instrument’s display or slip, then type the result in or dismiss it.
      </p>
      {data && data.captures.length === 0 && <p className="text-sm text-ink-500">None.</p>}
      <ul className="space-y-3">
        {data?.captures.map((c) => (
          <li key={c.id} data-capture-id={c.id} className="rounded-lg border border-signal-500/40 bg-white p-3 shadow-sm">
            <div className="mb-2 flex flex-wrap items-center gap-x-2 gap-y-1 text-sm">
              <span className="font-medium">{c.instrumentName ?? c.instrumentCode}</span>
              <span className="text-ink-500">· {formatDateTime(c.receivedAt)} ·</span>
              <span className="text-signal-600">{c.reason}</span>
              <span className="ml-auto flex gap-2">
                <button type="button" className={buttonClass.secondary} onClick={() => setTranscribing(c)}>
                  Enter by hand…
                </button>
                <button type="button" className={buttonClass.secondary} onClick={() => setDismissing(c)}>
                  Dismiss…
                </button>
              </span>
            </div>
            <pre className="max-h-48 overflow-auto rounded bg-paper p-2 font-mono text-xs leading-relaxed">{c.raw}</pre>
          </li>
        ))}
      </ul>
      {transcribing && <TranscribeDialog capture={transcribing} onClose={close} />}
      {dismissing && <DismissDialog capture={dismissing} onClose={close} />}
    </section>
  );
}

function RawText({ capture }: { capture: Capture }) {
  return <pre className="mb-4 max-h-40 overflow-auto rounded bg-white p-2 font-mono text-xs shadow-inner">{capture.raw}</pre>;
}

type TranscribeForm = z.input<typeof transcribeCaptureSchema>;

function TranscribeDialog({ capture, onClose }: { capture: Capture; onClose: (message?: string) => void }) {
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, formState, control } = useForm<TranscribeForm>({
    resolver: zodResolver(transcribeCaptureSchema),
    defaultValues: { analyte: '', comparator: null, unit: '', sampleId: null, measuredAt: null },
  });
  const analytes = useSWR<{ analytes: { code: string; name: string; units: string[] }[] }>('/api/captures/analytes', fetcher);
  const chosen = useWatch({ control, name: 'analyte' });
  const units = analytes.data?.analytes.find((a) => a.code === chosen)?.units ?? [];
  const { errors, isSubmitting } = formState;
  const blankToNull = (v: unknown) => (v === '' ? null : v);

  const submit = handleSubmit(async (values) => {
    setFailure(null);
    try {
      await send(`/api/captures/${capture.id}/transcribe`, 'POST', values);
      onClose('Result entered from the capture; it is waiting under unassigned readings, marked as typed in.');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not save.');
    }
  });

  return (
    <Modal title="Enter the result by hand" onClose={() => onClose()}>
      <RawText capture={capture} />
      <form onSubmit={submit} noValidate className="space-y-3">
        {failure && <Notice tone="error">{failure}</Notice>}
        <div className="grid grid-cols-2 gap-3">
          <Field id="t-analyte" label="Test" error={errors.analyte?.message}>
            <select id="t-analyte" className={inputClass} aria-invalid={!!errors.analyte} {...register('analyte')}>
              <option value="">Choose…</option>
              {analytes.data?.analytes.map((a) => (
                <option key={a.code} value={a.code}>
                  {a.code} · {a.name}
                </option>
              ))}
            </select>
          </Field>
          <Field id="t-sample" label="Sample ID (if printed)">
            <input id="t-sample" className={inputClass} {...register('sampleId', { setValueAs: blankToNull })} />
          </Field>
          <Field id="t-comparator" label="Printed as">
            <select id="t-comparator" className={inputClass} {...register('comparator', { setValueAs: blankToNull })}>
              <option value="">exact value</option>
              <option value="<">below (&lt;)</option>
              <option value=">">above (&gt;)</option>
            </select>
          </Field>
          <Field id="t-value" label="Value (12.4 or 12,4)" error={errors.value?.message}>
            <input id="t-value" inputMode="decimal" className={inputClass} aria-invalid={!!errors.value} {...register('value')} />
          </Field>
          <Field id="t-unit" label="Unit" error={errors.unit?.message}>
            <select id="t-unit" className={inputClass} aria-invalid={!!errors.unit} {...register('unit')}>
              <option value="">{chosen ? 'Choose…' : 'Choose the test first'}</option>
              {units.map((u) => (
                <option key={u} value={u}>
                  {u}
                </option>
              ))}
            </select>
          </Field>
          <Field id="t-measured" label="Measured at" error={errors.measuredAt?.message}>
            <input
              id="t-measured"
              type="datetime-local"
              className={inputClass}
              {...register('measuredAt', { setValueAs: (v: string) => (v ? new Date(v).toISOString() : null) })}
            />
          </Field>
        </div>
        <Field id="t-note" label="Note (optional)">
          <input id="t-note" className={inputClass} {...register('note')} />
        </Field>
        <p className="text-xs text-ink-500">Check the value against the analyzer’s display or slip before saving: a typed result carries that mark.</p>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>Cancel</button>
          <button type="submit" className={buttonClass.primary} disabled={isSubmitting}>Save result</button>
        </div>
      </form>
    </Modal>
  );
}

function DismissDialog({ capture, onClose }: { capture: Capture; onClose: (message?: string) => void }) {
  const [failure, setFailure] = useState<string | null>(null);
  const { register, handleSubmit, formState } = useForm<z.input<typeof dismissCaptureSchema>>({ resolver: zodResolver(dismissCaptureSchema) });
  const submit = handleSubmit(async (values) => {
    try {
      await send(`/api/captures/${capture.id}/dismiss`, 'POST', values);
      onClose('Capture dismissed; its text and your reason stay on record.');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not dismiss.');
    }
  });
  return (
    <Modal title="Dismiss capture" onClose={() => onClose()}>
      <RawText capture={capture} />
      <form onSubmit={submit} noValidate className="space-y-3">
        {failure && <Notice tone="error">{failure}</Notice>}
        <Field id="d-reason" label="Reason" hint="For example: paper-feed notice, self-test, no result on it." error={formState.errors.reason?.message}>
          <input id="d-reason" autoFocus className={inputClass} aria-invalid={!!formState.errors.reason} {...register('reason')} />
        </Field>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>Cancel</button>
          <button type="submit" className={buttonClass.danger} disabled={formState.isSubmitting}>Dismiss</button>
        </div>
      </form>
    </Modal>
  );
}
