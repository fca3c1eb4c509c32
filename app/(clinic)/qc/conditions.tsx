'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { Field, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { useAction } from './use-action';

interface Entry {
  id: string;
  day: string;
  temperatureC: number;
  note: string | null;
}

/** The lab's daily room temperature; results on a day with a missing or out-of-range entry are marked. */
export function TemperatureLog({ canManage }: { canManage: boolean }) {
  const { data } = useSWR<{ entries: Entry[] }>('/api/quality/temperatures', fetcher);
  const action = useAction();
  const today = new Date().toLocaleDateString('en-CA');
  const [form, setForm] = useState({ day: today, temperatureC: '', note: '' });
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const ok = await action.run('/api/quality/temperatures', 'POST', { ...form, temperatureC: Number(form.temperatureC), note: form.note || null });
    if (ok) setForm({ ...form, temperatureC: '', note: '' });
  };
  const entries = data?.entries ?? [];
  const hasToday = entries.some((e) => e.day === today);
  return (
    <section aria-labelledby="temperature-heading" className="space-y-3">
      <h2 id="temperature-heading" className="text-lg font-semibold text-ink-900">
        Room temperature log
      </h2>
      <p className="max-w-3xl text-sm text-ink-700">
        One reading a day. Results from an instrument with an operating range (set by an administrator under Admin → Instruments)
        are marked on a day whose entry is missing or outside that range.
      </p>
      {!hasToday && <p className="text-sm font-semibold text-signal-600">No entry for today yet.</p>}
      {canManage && (
        <form onSubmit={submit} className="flex flex-wrap items-end gap-3" noValidate>
          <Field id="temp-day" label="Day" error={action.issues.day}>
            <input id="temp-day" type="date" className={inputClass} value={form.day} onChange={(e) => setForm({ ...form, day: e.target.value })} />
          </Field>
          <Field id="temp-c" label="Temperature (°C)" error={action.issues.temperatureC}>
            <input id="temp-c" inputMode="decimal" className={`${inputClass} w-28`} value={form.temperatureC} onChange={(e) => setForm({ ...form, temperatureC: e.target.value })} />
          </Field>
          <Field id="temp-note" label="Note">
            <input id="temp-note" className={inputClass} value={form.note} onChange={(e) => setForm({ ...form, note: e.target.value })} />
          </Field>
          <button type="submit" className={buttonClass.secondary} disabled={action.busy}>
            Log temperature
          </button>
          {action.error && !Object.keys(action.issues).length && <span role="alert" className="text-xs text-alarm-700">{action.error}</span>}
        </form>
      )}
      <ul className="flex flex-wrap gap-2 text-xs" data-testid="temperature-entries">
        {entries.slice(0, 14).map((e) => (
          <li key={e.id} className="rounded border border-ink-100 bg-white px-2 py-1">
            {e.day}: <span className="font-mono">{e.temperatureC} °C</span>
            {e.note ? ` · ${e.note}` : ''}
          </li>
        ))}
      </ul>
    </section>
  );
}
