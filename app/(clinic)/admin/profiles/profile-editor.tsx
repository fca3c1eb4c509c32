'use client';
import { useDebounced } from '@/app/components/use-debounced';
import { useState } from 'react';
import useSWR from 'swr';
import { useRouter } from 'next/navigation';
import { useFieldArray, useForm, useWatch, type FieldErrors } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, send } from '@/lib/client/fetcher';
import { formatValue } from '@/lib/format';
import { saveProfileSchema } from '@/lib/validation/profile';
import { DATE_FORMATS, PROFILE_CAPTURES, TIME_FORMATS, type ProfileDefinitionInput } from '@/lib/validation/profile';

type FormValues = z.input<typeof saveProfileSchema>;

export type PreviewItem =
  | {
      kind: 'reading';
      raw: string;
      fields: Record<string, string>;
      reading: { analyte: string; value: number | null; comparator: '<' | '>' | null; unit: string | null; sampleId: string | null; measuredAt: string | null; flags: string[] };
      /** Set when the slip's control line matched: the result goes to QC, never to a patient. */
      control: { level: string | null } | null;
    }
  | { kind: 'unparsed'; raw: string; reason: string };

const TEMPLATE: ProfileDefinitionInput = {
  analyzer: '',
  encoding: 'utf8',
  record: { start: '^RESULT', end: '^END', formFeed: false, maxLines: 60 },
  fields: [
    { label: 'Result line', pattern: '^Result\\s+(?<comparator>[<>])?(?<value>[0-9.,]+)\\s*(?<unit>\\S+)?', required: true, repeats: false },
  ],
  decimalComma: false,
  dateFormat: 'YYYY-MM-DD',
  timeFormat: 'HH:mm',
};

const blankToUndefined = (v: unknown) => (v === '' || v === null ? undefined : v);
const numberOrUndefined = (v: unknown) => (v === '' || v === null || v === undefined ? undefined : Number(v));
/** An empty control-line box means the profile has no control line (not a control line with no pattern). */
function withoutBlankControl<T extends { control?: { pattern?: string } }>(definition: T): T {
  return definition.control?.pattern ? definition : { ...definition, control: undefined };
}


/** The editor: the profile as a form on the left, the captured printout and what the profile makes of it on the right. */
export function ProfileEditor({ profileKey, initial, version }: { profileKey?: string; initial?: FormValues; version?: number }) {
  const router = useRouter();
  const [sample, setSample] = useState('');
  const [saved, setSaved] = useState<string | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const form = useForm<FormValues>({
    resolver: (values, context, options) => zodResolver(saveProfileSchema)({ ...values, definition: withoutBlankControl(values.definition) }, context, options),
    defaultValues: initial ?? { name: '', definition: TEMPLATE },
  });
  const { register, handleSubmit, control, formState } = form;
  const errors = formState.errors;
  const lines = useFieldArray({ control, name: 'definition.fields' });
  const definition = useWatch({ control, name: 'definition' });
  const request = useDebounced(JSON.stringify({ definition: definition && withoutBlankControl(definition), sample }), 400);

  // The server runs the bridge's own profile engine on the sample, so the preview is what the bridge will do.
  const previewed = useSWR<{ items: PreviewItem[] }, Error>(
    sample.trim() ? ['/api/admin/profiles/preview', request] : null,
    ([url, body]: [string, string]) => send<{ items: PreviewItem[] }>(url, 'POST', JSON.parse(body)),
    { keepPreviousData: false, shouldRetryOnError: false, revalidateOnFocus: false },
  );
  const preview = !sample.trim()
    ? null
    : previewed.error
      ? {
          problem: previewed.error.message,
          issues: previewed.error instanceof ApiClientError ? previewed.error.issues : [],
        }
      : (previewed.data ?? null);

  const save = handleSubmit(async (values) => {
    setFailure(null);
    try {
      const url = profileKey ? `/api/admin/profiles/${profileKey}/versions` : '/api/admin/profiles';
      const result = await send<{ profile: { key: string; version: number } }>(url, 'POST', { ...values, definition: withoutBlankControl(values.definition) });
      setSaved(`Saved as version ${result.profile.version}. Bridges reading with it pick it up on their next check.`);
      if (!profileKey) router.replace(`/admin/profiles/${result.profile.key}`);
      router.refresh();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not save.');
    }
  });

  const loadFile = async (file: File | undefined) => {
    if (!file) return;
    const bytes = await file.arrayBuffer();
    // Latin-1 printers: decode byte for byte, as the bridge will.
    setSample(new TextDecoder(definition?.encoding === 'latin1' ? 'iso-8859-1' : 'utf-8').decode(bytes));
  };

  const err = (path: string) => fieldError(errors, path);

  return (
    <div className="grid gap-6 lg:grid-cols-2">
      <form onSubmit={save} noValidate className="space-y-5 rounded-xl border border-ink-100 bg-white p-5 shadow-sm">
        {saved && <Notice tone="ok">{saved}</Notice>}
        {failure && <Notice tone="error">{failure}</Notice>}
        <div className="grid gap-3 sm:grid-cols-2">
          <Field id="p-name" label="Profile name" error={err('name')}>
            <input id="p-name" className={inputClass} {...register('name')} />
          </Field>
          <Field id="p-analyzer" label="Analyzer it reads" error={err('definition.analyzer')}>
            <input id="p-analyzer" className={inputClass} placeholder="Electrolyte printer, bench 3" {...register('definition.analyzer')} />
          </Field>
        </div>

        <fieldset className="space-y-3">
          <legend className="text-sm font-semibold text-ink-900">Where a result slip starts and ends</legend>
          <div className="grid gap-3 sm:grid-cols-2">
            <Field id="p-start" label="Start line pattern" hint="A line matching this begins a record." error={err('definition.record.start')}>
              <input id="p-start" className={`${inputClass} font-mono`} {...register('definition.record.start', { setValueAs: blankToUndefined })} />
            </Field>
            <Field id="p-end" label="End line pattern" hint="A line matching this ends it." error={err('definition.record.end')}>
              <input id="p-end" className={`${inputClass} font-mono`} {...register('definition.record.end', { setValueAs: blankToUndefined })} />
            </Field>
            <Field id="p-idle" label="Or: quiet gap ends it (ms)" error={err('definition.record.idleMs')}>
              <input id="p-idle" inputMode="numeric" className={inputClass} {...register('definition.record.idleMs', { setValueAs: numberOrUndefined })} />
            </Field>
            <Field id="p-maxlines" label="Most lines in one record" error={err('definition.record.maxLines')}>
              <input id="p-maxlines" inputMode="numeric" className={inputClass} {...register('definition.record.maxLines', { setValueAs: numberOrUndefined })} />
            </Field>
          </div>
          <label className="flex items-center gap-2 text-sm">
            <input type="checkbox" {...register('definition.record.formFeed')} /> A form feed (page eject) ends a record
          </label>
          {err('definition.record') && <p className="text-xs font-medium text-alarm-700" role="alert">{err('definition.record')}</p>}
        </fieldset>

        <fieldset className="space-y-3">
          <legend className="text-sm font-semibold text-ink-900">Lines to read</legend>
          <p className="text-xs text-ink-500">
            Each pattern names what it captures with (?&lt;name&gt;…). Names: {PROFILE_CAPTURES.join(', ')}.
          </p>
          {lines.fields.map((line, i) => (
            <div key={line.id} className="space-y-2 rounded-lg border border-ink-100 p-3">
              <div className="grid gap-2 sm:grid-cols-[1fr_2fr]">
                <Field id={`p-f${i}-label`} label="Line" error={err(`definition.fields.${i}.label`)}>
                  <input id={`p-f${i}-label`} className={inputClass} {...register(`definition.fields.${i}.label`)} />
                </Field>
                <Field id={`p-f${i}-pattern`} label="Pattern" error={err(`definition.fields.${i}.pattern`)}>
                  <input id={`p-f${i}-pattern`} className={`${inputClass} font-mono`} {...register(`definition.fields.${i}.pattern`)} />
                </Field>
              </div>
              <div className="flex flex-wrap items-center gap-4 text-sm">
                <label className="flex items-center gap-2">
                  <input type="checkbox" {...register(`definition.fields.${i}.required`)} /> Required
                </label>
                <label className="flex items-center gap-2">
                  <input type="checkbox" {...register(`definition.fields.${i}.repeats`)} /> One result per matching line
                </label>
                {err(`definition.fields.${i}.repeats`) && <span className="text-xs text-alarm-700">{err(`definition.fields.${i}.repeats`)}</span>}
                <button type="button" className={`${buttonClass.quiet} ml-auto`} onClick={() => lines.remove(i)}>
                  Remove line
                </button>
              </div>
            </div>
          ))}
          {err('definition.fields') && <p className="text-xs font-medium text-alarm-700" role="alert">{err('definition.fields')}</p>}
          <button type="button" className={buttonClass.secondary} onClick={() => lines.append({ label: '', pattern: '', required: false, repeats: false })}>
            Add a line
          </button>
        </fieldset>

        <fieldset className="space-y-2">
          <legend className="text-sm font-semibold text-ink-900">Control runs</legend>
          <Field
            id="p-control"
            label="Line that marks a control run (optional)"
            hint="For readers that print no sample ID on a QC slip, e.g. ^QC\s+LEVEL\s+(?<level>\S+). Every result of a slip with this line goes to QC, never to a patient; (?<level>…) picks the control material of that level."
            error={err('definition.control.pattern') ?? err('definition.control')}
          >
            <input id="p-control" className={`${inputClass} font-mono`} spellCheck={false} {...register('definition.control.pattern', { setValueAs: blankToUndefined })} />
          </Field>
        </fieldset>

        <fieldset className="grid gap-3 sm:grid-cols-2">
          <legend className="mb-2 text-sm font-semibold text-ink-900">Values, units and times</legend>
          <Field id="p-analyte" label="Test (when not printed)" error={err('definition.analyte')}>
            <input id="p-analyte" className={inputClass} {...register('definition.analyte', { setValueAs: blankToUndefined })} />
          </Field>
          <Field id="p-unit" label="Unit (when not printed)" hint="UCUM, e.g. mg/L or mmol/L" error={err('definition.unit')}>
            <input id="p-unit" className={inputClass} {...register('definition.unit', { setValueAs: blankToUndefined })} />
          </Field>
          <Field id="p-date" label="Date format">
            <select id="p-date" className={inputClass} {...register('definition.dateFormat')}>
              {DATE_FORMATS.map((f) => <option key={f}>{f}</option>)}
            </select>
          </Field>
          <Field id="p-time" label="Time format">
            <select id="p-time" className={inputClass} {...register('definition.timeFormat')}>
              {TIME_FORMATS.map((f) => <option key={f}>{f}</option>)}
            </select>
          </Field>
          <Field id="p-encoding" label="Characters">
            <select id="p-encoding" className={inputClass} {...register('definition.encoding')}>
              <option value="utf8">UTF-8 / ASCII</option>
              <option value="latin1">Latin-1</option>
            </select>
          </Field>
          <label className="flex items-center gap-2 self-end pb-2 text-sm">
            <input type="checkbox" {...register('definition.decimalComma')} /> Decimal comma (12,5)
          </label>
        </fieldset>

        <div className="flex items-center gap-3">
          <button type="submit" className={buttonClass.primary} disabled={formState.isSubmitting}>
            {profileKey ? `Save as version ${(version ?? 0) + 1}` : 'Save profile'}
          </button>
        </div>
      </form>

      <section aria-labelledby="preview-heading" className="space-y-3">
        <h2 id="preview-heading" className="text-lg font-semibold">Try it on a captured printout</h2>
        <Field id="p-sample" label="Paste the printout, or load a capture file">
          <textarea
            id="p-sample"
            rows={10}
            className={`${inputClass} font-mono text-xs`}
            value={sample}
            onChange={(e) => setSample(e.target.value)}
            spellCheck={false}
          />
        </Field>
        <input type="file" aria-label="Load a capture file" accept=".txt,.log,.cap,text/plain" onChange={(e) => loadFile(e.target.files?.[0])} className="text-sm" />
        <Preview preview={preview} />
      </section>
    </div>
  );
}

function Preview({ preview }: { preview: { items: PreviewItem[] } | { problem: string; issues: { path: string; message: string }[] } | null }) {
  if (!preview) return <p className="text-sm text-ink-500">The preview shows each record, every field read from it, and every line left unread.</p>;
  if ('problem' in preview) {
    return (
      <Notice tone="error">
        {preview.problem}
        {preview.issues.length > 1 && (
          <ul className="mt-1 list-disc pl-5">
            {preview.issues.map((i) => <li key={i.path + i.message}><span className="font-mono">{i.path}</span>: {i.message}</li>)}
          </ul>
        )}
      </Notice>
    );
  }
  const readings = preview.items.filter((i) => i.kind === 'reading').length;
  return (
    <div className="space-y-3" data-testid="profile-preview">
      <p className="text-sm font-medium">
        {readings} result{readings === 1 ? '' : 's'}, {preview.items.length - readings} unread part{preview.items.length - readings === 1 ? '' : 's'}
      </p>
      {preview.items.map((item, i) =>
        item.kind === 'reading' ? (
          <article key={i} className="rounded-lg border border-moss-700/30 bg-white p-3 text-sm shadow-sm">
            <p className="font-semibold">
              {item.reading.analyte} <span className="font-mono">{formatValue(item.reading)}</span>
            </p>
            {item.control && (
              <p className="mt-1 text-xs font-semibold text-signal-600" data-testid="preview-control">
                Control run{item.control.level ? `, level ${item.control.level}` : ''}: goes to QC, never to a patient
              </p>
            )}
            <dl className="mt-1 grid grid-cols-[auto_1fr] gap-x-3 text-xs">
              {Object.entries(item.fields).map(([name, value]) => (
                <div key={name} className="contents">
                  <dt className="text-ink-500">{name}</dt>
                  <dd className="font-mono">{value}</dd>
                </div>
              ))}
              {item.reading.sampleId && !item.fields.sampleId && (<><dt className="text-ink-500">sampleId</dt><dd className="font-mono">{item.reading.sampleId}</dd></>)}
              {item.reading.measuredAt && (<><dt className="text-ink-500">measured</dt><dd className="font-mono">{item.reading.measuredAt}</dd></>)}
            </dl>
            <details className="mt-1">
              <summary className="cursor-pointer text-xs text-ink-500">Record text</summary>
              <pre className="mt-1 overflow-auto rounded bg-paper p-2 font-mono text-xs">{item.raw}</pre>
            </details>
          </article>
        ) : (
          <article key={i} className="rounded-lg border border-signal-500/50 bg-signal-100/40 p-3 text-sm">
            <p className="text-xs font-semibold text-signal-600">Not read: {item.reason}</p>
            <pre className="mt-1 overflow-auto rounded bg-white p-2 font-mono text-xs">{item.raw}</pre>
          </article>
        ),
      )}
    </div>
  );
}

/** The message react-hook-form holds for a dotted path, if any. */
function fieldError(errors: FieldErrors<FormValues>, path: string): string | undefined {
  let node: unknown = errors;
  for (const part of path.split('.')) {
    if (node === null || typeof node !== 'object') return undefined;
    node = (node as Record<string, unknown>)[part];
  }
  const message = (node as { message?: unknown } | undefined)?.message ?? (node as { root?: { message?: unknown } } | undefined)?.root?.message;
  return typeof message === 'string' ? message : undefined;
}
