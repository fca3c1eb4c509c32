'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime, speciesLabel } from '@/lib/format';
import type { VerificationResult } from '@/lib/quality/reference-verification';
import type { Overview } from './types';
import { useAction } from './use-action';

interface Verification {
  id: string;
  analyte: string;
  species: string;
  unit: string;
  low: number | null;
  high: number | null;
  intervalSource: string;
  decision: string;
  note: string | null;
  performedAt: string;
  result: VerificationResult;
}

const DECISION_WORDS: Record<string, string> = {
  accepted: 'Verified',
  'test-second-set': 'Not verified yet: test a second set of 20',
  rejected: 'Not verified: establish the clinic’s own interval',
};

/** Parses pasted values: one per line, or separated by commas, semicolons or spaces. */
export function parseValues(text: string): { values: number[]; bad: string[] } {
  const parts = text.split(/[\s,;]+/).filter(Boolean);
  const values: number[] = [];
  const bad: string[] = [];
  for (const p of parts) {
    const n = Number(p);
    if (Number.isFinite(n)) values.push(n);
    else bad.push(p);
  }
  return { values, bad };
}

/** Reference-interval verification with 20 of the clinic's own healthy animals, and the reports kept. */
export function IntervalVerification({ data, canManage }: { data: Overview; canManage: boolean }) {
  const list = useSWR<{ verifications: Verification[] }>('/api/quality/verifications', fetcher);
  const action = useAction();
  const intervals = data.intervals.filter((i) => i.low !== null || i.high !== null);
  const [intervalId, setIntervalId] = useState(intervals[0]?.id ?? '');
  const [text, setText] = useState('');
  const [second, setSecond] = useState('');
  const [note, setNote] = useState('');
  const parsed = parseValues(text);
  const parsedSecond = parseValues(second);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const ok = await action.run('/api/quality/verifications', 'POST', {
      intervalId,
      values: parsed.values,
      secondValues: parsedSecond.values.length ? parsedSecond.values : null,
      note: note || null,
    });
    if (ok) {
      setText('');
      setSecond('');
      setNote('');
    }
  };
  return (
    <section aria-labelledby="verification-heading" className="space-y-3" id="verification">
      <h2 id="verification-heading" className="text-lg font-semibold text-ink-900">
        Reference-interval verification
      </h2>
      <p className="max-w-3xl text-sm text-ink-700">
        Test 20 healthy animals of the species; the interval is verified for this clinic when no more than 2 of the 20 fall outside it.
        With 3 or more outside, test a second set of 20.
      </p>
      {canManage && (
        <form onSubmit={submit} className="grid gap-3 rounded-lg border border-ink-100 bg-white p-4 md:grid-cols-2" noValidate>
          <Field id="ver-interval" label="Interval" error={action.issues.intervalId}>
            <select id="ver-interval" className={inputClass} value={intervalId} onChange={(e) => setIntervalId(e.target.value)}>
              {intervals.map((i) => (
                <option key={i.id} value={i.id}>
                  {i.analyte} · {speciesLabel[i.species] ?? i.species}: {i.low ?? '…'}–{i.high ?? '…'} {i.unit}
                </option>
              ))}
            </select>
          </Field>
          <Field id="ver-note" label="Note" hint="e.g. which animals, how they were judged healthy">
            <input id="ver-note" className={inputClass} value={note} onChange={(e) => setNote(e.target.value)} />
          </Field>
          <Field id="ver-values" label={`Values (${parsed.values.length} of 20)`} hint="One per line, or separated by commas" error={action.issues.values ?? (parsed.bad.length ? `Not numbers: ${parsed.bad.join(', ')}` : undefined)}>
            <textarea id="ver-values" rows={5} className={inputClass} value={text} onChange={(e) => setText(e.target.value)} />
          </Field>
          <Field id="ver-second" label={`Second set, if needed (${parsedSecond.values.length} of 20)`} error={action.issues.secondValues}>
            <textarea id="ver-second" rows={5} className={inputClass} value={second} onChange={(e) => setSecond(e.target.value)} />
          </Field>
          <div className="flex items-center gap-2 md:col-span-2">
            <button type="submit" className={buttonClass.primary} disabled={action.busy || parsed.bad.length > 0 || parsedSecond.bad.length > 0}>
              Check and record
            </button>
            {action.error && !Object.keys(action.issues).length && <Notice tone="error">{action.error}</Notice>}
          </div>
        </form>
      )}
      <ul className="space-y-3" data-testid="verifications">
        {(list.data?.verifications ?? []).map((v) => (
          <li key={v.id} className="rounded-lg border border-ink-100 bg-white p-3 text-sm shadow-sm" data-decision={v.decision}>
            <div className="flex flex-wrap items-baseline gap-2">
              <span className="font-semibold">
                {v.analyte} · {speciesLabel[v.species] ?? v.species}
              </span>
              <span>
                interval {v.low ?? '…'}–{v.high ?? '…'} {v.unit}
              </span>
              <span className={`rounded px-2 py-0.5 text-xs font-semibold ${v.decision === 'accepted' ? 'bg-moss-100 text-moss-700' : 'bg-alarm-100 text-alarm-700'}`}>
                {DECISION_WORDS[v.decision] ?? v.decision}
              </span>
              <span className="text-xs text-ink-500">{formatDateTime(v.performedAt)}</span>
            </div>
            <p className="mt-1">{v.result.message}</p>
            {[v.result.first, v.result.second].filter((s) => !!s).map((set, i) => (
              <p key={i} className="mt-1 font-mono text-xs leading-relaxed">
                {i === 1 ? 'Second set: ' : ''}
                {set!.n} samples, {set!.outside} outside:{' '}
                {set!.values.map((c, j) => (
                  <span key={j} className={c.outside ? 'font-bold text-alarm-700' : undefined}>
                    {c.value}
                    {c.outside ? (c.outside === 'low' ? '↓' : '↑') : ''}
                    {j < set!.values.length - 1 ? ', ' : ''}
                  </span>
                ))}
              </p>
            ))}
            <p className="mt-1 text-xs text-ink-500">Interval source: {v.intervalSource}{v.note ? ` · ${v.note}` : ''}</p>
          </li>
        ))}
      </ul>
    </section>
  );
}
