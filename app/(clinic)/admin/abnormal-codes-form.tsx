'use client';
// The per-test rule for coded results (POS/NEG, HL7 CE/CWE): which codes mean abnormal when the analyzer
// sends no flag of its own. The same zod schema as the handler checks the list before it is sent.
import { useState } from 'react';
import { useForm, useWatch } from 'react-hook-form';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, send } from '@/lib/client/fetcher';
import { abnormalCodesSchema } from '@/lib/validation/clinical';

export interface CodedResultSeen {
  analyte: string;
  code: string;
  display: string | null;
  count: number;
}

type FormValues = { analyte: string; name: string; codes: string };

/** "POS, Positive" → ["POS", "Positive"]: the form's one line as the API's list. */
export const splitCodes = (line: string) => line.split(',').map((c) => c.trim()).filter(Boolean);

export function AbnormalCodesForm({
  analytes,
  seen,
  onSaved,
}: {
  analytes: { code: string; name: string; abnormalCodes: string[] }[];
  seen: CodedResultSeen[];
  onSaved: () => void;
}) {
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const { register, handleSubmit, setError, setValue, control, reset, formState } = useForm<FormValues>({ defaultValues: { analyte: '', name: '', codes: '' } });
  const { errors, isSubmitting } = formState;
  const analyte = (useWatch({ control, name: 'analyte' }) ?? '').trim();
  const known = analytes.find((a) => a.code === analyte);
  const codesFor = seen.filter((s) => s.analyte === analyte);
  const tests = [...new Set([...analytes.filter((a) => a.abnormalCodes.length).map((a) => a.code), ...seen.map((s) => s.analyte)])].sort();

  const save = handleSubmit(async (values) => {
    setMessage(null);
    if (!values.analyte.trim()) return setError('analyte', { message: 'Name the test, as the instrument prints it.' });
    const parsed = abnormalCodesSchema.safeParse({ name: values.name || undefined, abnormalCodes: splitCodes(values.codes) });
    if (!parsed.success) {
      for (const issue of parsed.error.issues) setError(issue.path[0] === 'name' ? 'name' : 'codes', { message: issue.message });
      return;
    }
    try {
      await send(`/api/admin/clinical/analytes/${encodeURIComponent(values.analyte.trim())}/abnormal-codes`, 'PUT', parsed.data);
      setMessage({ tone: 'ok', text: parsed.data.abnormalCodes.length ? `${values.analyte.trim()}: abnormal when ${parsed.data.abnormalCodes.join(', ')}.` : `${values.analyte.trim()}: rule removed; its coded results are not interpreted.` });
      reset({ analyte: '', name: '', codes: '' });
      onSaved();
    } catch (error) {
      if (error instanceof ApiClientError && error.issues.length) {
        for (const issue of error.issues) setError(issue.path.startsWith('name') ? 'name' : 'codes', { message: issue.message });
      } else setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not save.' });
    }
  });

  return (
    <div>
      <h3 className="mb-1 font-semibold">Coded results: which codes mean abnormal</h3>
      <p className="mb-2 text-sm text-ink-700">
        Used only when the analyzer sends no flag of its own; its flag always comes first. Compared without regard to capitals, with the code and its text.
      </p>
      {tests.length > 0 && (
        <ul className="mb-3 space-y-1 text-sm" aria-label="Coded-result rules">
          {tests.map((code) => {
            const rule = analytes.find((a) => a.code === code)?.abnormalCodes ?? [];
            const sent = seen.filter((s) => s.analyte === code);
            return (
              <li key={code} data-analyte={code}>
                <button type="button" className="font-mono font-semibold underline decoration-dotted" onClick={() => { setValue('analyte', code); setValue('codes', rule.join(', ')); }}>
                  {code}
                </button>{' '}
                {rule.length ? <>abnormal when {rule.join(', ')}</> : <span className="text-signal-600">no rule: not interpreted</span>}
                {sent.length > 0 && <span className="text-ink-500"> · sent so far: {sent.map((s) => `${s.code}${s.display ? ` (${s.display})` : ''} ×${s.count}`).join(', ')}</span>}
              </li>
            );
          })}
        </ul>
      )}
      {message && <div className="mb-2"><Notice tone={message.tone}>{message.text}</Notice></div>}
      <form onSubmit={save} noValidate className="grid gap-2 sm:grid-cols-4" aria-label="Abnormal codes for a test">
        <Field id="abnormal-analyte" label="Test (as the instrument prints it)" error={errors.analyte?.message}>
          <input id="abnormal-analyte" className={inputClass} list="abnormal-analytes" aria-invalid={!!errors.analyte} {...register('analyte')} />
        </Field>
        <datalist id="abnormal-analytes">
          {[...new Set([...tests, ...analytes.map((a) => a.code)])].map((c) => <option key={c} value={c} />)}
        </datalist>
        {analyte && !known && (
          <Field id="abnormal-name" label="Name (a test without settings yet)" error={errors.name?.message}>
            <input id="abnormal-name" className={inputClass} placeholder="FeLV antigen" {...register('name')} />
          </Field>
        )}
        <Field id="abnormal-codes" label="Codes that mean abnormal (comma-separated)" hint={codesFor.length ? `Sent so far: ${codesFor.map((s) => s.code).join(', ')}` : undefined} error={errors.codes?.message}>
          <input id="abnormal-codes" className={inputClass} placeholder="POS, Positive" aria-invalid={!!errors.codes} {...register('codes')} />
        </Field>
        <div className="flex items-end">
          <button type="submit" className={buttonClass.secondary} disabled={isSubmitting}>Save rule</button>
        </div>
      </form>
    </div>
  );
}
