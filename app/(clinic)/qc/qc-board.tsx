'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';
import { useActor } from '../actor';
import { LeveyJenningsChart } from './lj-chart';
import { QC_KEY, type Control, type Overview } from './types';
import { useAction } from './use-action';

const STATUS_WORDS = { accepted: 'Accepted', warning: 'Accepted with 1-2s warning', rejected: 'Rejected', none: 'No QC yet' } as const;
const STATUS_TONE = {
  accepted: 'bg-moss-100 text-moss-700',
  warning: 'bg-signal-100 text-signal-600',
  rejected: 'bg-alarm-100 text-alarm-700',
  none: 'bg-ink-100 text-ink-700',
} as const;

export function QcStatusBadge({ status }: { status: keyof typeof STATUS_WORDS }) {
  return <span className={`inline-block rounded px-2 py-0.5 text-xs font-semibold ${STATUS_TONE[status]}`}>{STATUS_WORDS[status]}</span>;
}

export function useQc() {
  return useSWR<Overview>(QC_KEY, fetcher, { refreshInterval: 60_000 });
}

export function QcBoard() {
  const { data, error } = useQc();
  const { role } = useActor();
  const canManage = role === 'admin' || role === 'technician';
  const [only, setOnly] = useState('');
  if (error) return <Notice tone="error">{error.message}</Notice>;
  if (!data) return <p className="text-sm text-ink-500">Loading QC…</p>;
  return (
    <div className="space-y-8">
      <QcStatus data={data} />
      <section aria-labelledby="controls-heading" className="space-y-4">
        <h2 id="controls-heading" className="text-lg font-semibold text-ink-900">
          Controls and Levey-Jennings charts
        </h2>
        {data.controls.length === 0 && <p className="text-sm text-ink-500">No control materials yet.</p>}
        <div className="flex items-center gap-2 text-sm">
          <label htmlFor="qc-only">Show controls for</label>
          <select id="qc-only" className={`${inputClass} w-auto`} value={only} onChange={(e) => setOnly(e.target.value)}>
            <option value="">every test</option>
            {[...new Set(data.controls.map((c) => c.analyte))].map((a) => (
              <option key={a}>{a}</option>
            ))}
          </select>
        </div>
        <div className="grid gap-4 lg:grid-cols-2">
          {data.controls.filter((c) => !only || c.analyte === only).map((c) => (
            <ControlCard key={c.id} control={c} canManage={canManage} />
          ))}
        </div>
        {canManage && <AddControlForm data={data} />}
      </section>
      {data.unmatched.length > 0 && <UnmatchedControls data={data} canManage={canManage} />}
      {data.unitProblems.length > 0 && <UnitProblems data={data} />}
      <SigmaSection data={data} canManage={canManage} />
    </div>
  );
}

function QcStatus({ data }: { data: Overview }) {
  const rows = data.status;
  return (
    <section aria-labelledby="qc-status-heading" className="space-y-3">
      <h2 id="qc-status-heading" className="text-lg font-semibold text-ink-900">
        QC status per test and instrument
      </h2>
      <p className="max-w-3xl text-sm text-ink-700">
        Westgard rules 1-2s (warning), 1-3s, 2-2s, R-4s, 4-1s and 10-x, within each control level and across levels. While QC
        for a test is rejected, new patient results of it carry a “QC failed” mark until a QC run is accepted.
      </p>
      {rows.length === 0 && <p className="text-sm text-ink-500">No QC runs yet.</p>}
      <ul className="space-y-2" data-testid="qc-status">
        {rows.map((s) => (
          <li key={`${s.analyte}|${s.instrumentId}`} className="rounded-lg border border-ink-100 bg-white p-3 shadow-sm" data-analyte={s.analyte} data-status={s.status}>
            <div className="flex flex-wrap items-center gap-2">
              <span className="font-semibold">{s.analyte}</span>
              <span className="text-sm text-ink-700">{s.instrumentName ?? 'any instrument'}</span>
              <QcStatusBadge status={s.status} />
              {s.lastRun && <span className="text-xs text-ink-500">last run {formatDateTime(new Date(s.lastRun.at).toISOString())}</span>}
            </div>
            {s.rejections.length > 0 && (
              <ul className="mt-2 space-y-1 text-sm">
                {s.rejections.slice(0, 5).map((r) => (
                  <li key={r.runId} data-testid="qc-rejection" className={r.status === 'rejected' ? 'text-alarm-700' : 'text-signal-600'}>
                    <span className="font-medium">{formatDateTime(r.at)}</span> — {r.status === 'rejected' ? 'rejected' : 'warning'}:{' '}
                    {r.violations.map((v) => v.message).join('; ')}
                  </li>
                ))}
              </ul>
            )}
          </li>
        ))}
      </ul>
    </section>
  );
}

function ControlCard({ control, canManage }: { control: Control; canManage: boolean }) {
  const action = useAction();
  const recent = [...control.points].reverse().slice(0, 8);
  return (
    <article className="rounded-lg border border-ink-100 bg-white p-4 shadow-sm" data-testid="control-card" data-control-id={control.id}>
      <header className="mb-2 flex flex-wrap items-baseline justify-between gap-2">
        <h3 className="font-semibold">
          {control.analyte} · {control.name} · level {control.level}
        </h3>
        <span className="text-xs text-ink-500">
          lot {control.lotNumber}
          {control.expiresOn ? `, expires ${control.expiresOn}` : ''} · {control.instrumentName ?? 'any instrument'}
        </span>
      </header>
      <p className="text-sm text-ink-700">
        Target {control.targetMean} ± {Number(control.targetSd.toPrecision(3))} {control.unit} (
        {control.targetSource === 'insert' ? 'from the insert' : 'established from the clinic’s own runs'})
        {control.sampleId ? ` · runs under sample ID ${control.sampleId}` : ''}
      </p>
      {control.points.length > 0 ? (
        <LeveyJenningsChart
          mean={control.targetMean}
          sd={control.targetSd}
          unit={control.unit}
          points={control.points}
          label={`Levey-Jennings chart for ${control.analyte} ${control.name} level ${control.level}: ${control.points.length} runs`}
        />
      ) : (
        <p className="my-4 text-sm text-ink-500">No runs of this control yet.</p>
      )}
      {recent.length > 0 && (
        <details className="mt-2 text-sm">
          <summary className="cursor-pointer text-ink-700">Latest runs as a table</summary>
          <table className="mt-2 w-full text-left text-xs">
            <thead>
              <tr className="text-ink-500">
                <th scope="col">When</th>
                <th scope="col">Value</th>
                <th scope="col">SD from mean</th>
                <th scope="col">Rules</th>
              </tr>
            </thead>
            <tbody>
              {recent.map((p) => (
                <tr key={p.id}>
                  <td>{formatDateTime(p.at)}</td>
                  <td className="font-mono">{Number(p.value.toPrecision(4))}</td>
                  <td className="font-mono">{p.z.toFixed(1)}</td>
                  <td>{p.rules.join(', ') || '—'}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </details>
      )}
      {canManage && (
        <div className="mt-3 flex flex-wrap items-center gap-2">
          <button
            type="button"
            className={buttonClass.secondary}
            disabled={action.busy}
            onClick={() => void action.run(`/api/quality/materials/${control.id}/establish`, 'POST')}
          >
            Set target from own runs (≥ 20)
          </button>
          {action.error && <span role="alert" className="text-xs text-alarm-700">{action.error}</span>}
        </div>
      )}
    </article>
  );
}

function AddControlForm({ data }: { data: Overview }) {
  const action = useAction();
  const [open, setOpen] = useState(false);
  const [form, setForm] = useState({ analyte: data.analytes[0] ?? '', instrumentId: '', name: '', lotNumber: '', level: '1', sampleId: '', unit: '', targetMean: '', targetSd: '', expiresOn: '' });
  const set = (k: keyof typeof form) => (e: React.ChangeEvent<HTMLInputElement | HTMLSelectElement>) => setForm({ ...form, [k]: e.target.value });
  if (!open) {
    return (
      <button type="button" className={buttonClass.secondary} onClick={() => setOpen(true)}>
        Add a control material
      </button>
    );
  }
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const ok = await action.run('/api/quality/materials', 'POST', {
      ...form,
      instrumentId: form.instrumentId || null,
      sampleId: form.sampleId || null,
      expiresOn: form.expiresOn || null,
      targetMean: Number(form.targetMean),
      targetSd: Number(form.targetSd),
    });
    if (ok) setOpen(false);
  };
  return (
    <form onSubmit={submit} className="grid gap-3 rounded-lg border border-ink-100 bg-white p-4 sm:grid-cols-2 lg:grid-cols-4" noValidate>
      <Field id="cm-analyte" label="Test">
        <select id="cm-analyte" className={inputClass} value={form.analyte} onChange={set('analyte')}>
          {data.analytes.map((a) => (
            <option key={a}>{a}</option>
          ))}
        </select>
      </Field>
      <Field id="cm-instrument" label="Instrument">
        <select id="cm-instrument" className={inputClass} value={form.instrumentId} onChange={set('instrumentId')}>
          <option value="">Any instrument</option>
          {data.instruments
            .filter((i) => i.analytes.includes(form.analyte))
            .map((i) => (
              <option key={i.id} value={i.id}>
                {i.name}
              </option>
            ))}
        </select>
      </Field>
      <Field id="cm-name" label="Control name" error={action.issues.name}>
        <input id="cm-name" className={inputClass} value={form.name} onChange={set('name')} />
      </Field>
      <Field id="cm-lot" label="Lot" error={action.issues.lotNumber}>
        <input id="cm-lot" className={inputClass} value={form.lotNumber} onChange={set('lotNumber')} />
      </Field>
      <Field id="cm-level" label="Level" error={action.issues.level}>
        <input id="cm-level" className={inputClass} value={form.level} onChange={set('level')} />
      </Field>
      <Field id="cm-sample" label="Sample ID it runs under" hint="Optional, e.g. QC-L1">
        <input id="cm-sample" className={inputClass} value={form.sampleId} onChange={set('sampleId')} />
      </Field>
      <Field id="cm-unit" label="Unit" error={action.issues.unit}>
        <input id="cm-unit" className={inputClass} value={form.unit} onChange={set('unit')} />
      </Field>
      <Field id="cm-mean" label="Target mean (insert)" error={action.issues.targetMean}>
        <input id="cm-mean" inputMode="decimal" className={inputClass} value={form.targetMean} onChange={set('targetMean')} />
      </Field>
      <Field id="cm-sd" label="Target SD (insert)" error={action.issues.targetSd}>
        <input id="cm-sd" inputMode="decimal" className={inputClass} value={form.targetSd} onChange={set('targetSd')} />
      </Field>
      <Field id="cm-expires" label="Expires" error={action.issues.expiresOn}>
        <input id="cm-expires" type="date" className={inputClass} value={form.expiresOn} onChange={set('expiresOn')} />
      </Field>
      <div className="flex items-end gap-2 sm:col-span-2">
        <button type="submit" className={buttonClass.primary} disabled={action.busy}>
          Save control
        </button>
        <button type="button" className={buttonClass.secondary} onClick={() => setOpen(false)}>
          Cancel
        </button>
      </div>
      {action.error && (
        <div className="sm:col-span-2 lg:col-span-4">
          <Notice tone="error">{action.error}</Notice>
        </div>
      )}
    </form>
  );
}

/** QC readings no rule has seen: their unit does not convert to the control's, so comparing would be wrong. */
function UnitProblems({ data }: { data: Overview }) {
  const controlOf = new Map(data.controls.map((c) => [c.id, c]));
  return (
    <section aria-labelledby="unit-problems-heading" className="space-y-2">
      <h2 id="unit-problems-heading" className="text-lg font-semibold text-alarm-700">
        QC readings not compared: unit
      </h2>
      <p className="text-sm text-ink-700">
        These arrived in a unit that does not convert to their control’s unit, so they are left out of the Westgard rules and the chart.
        Check the instrument’s unit setting (Admin → Units) or the control’s unit.
      </p>
      <ul className="space-y-2" data-testid="qc-unit-problems">
        {data.unitProblems.map((p) => {
          const control = controlOf.get(p.materialId);
          return (
            <li key={p.id} className="rounded border border-alarm-700/40 bg-alarm-100 p-2 text-sm">
              <span className="font-medium">{p.analyte}</span>{' '}
              <span className="font-mono">
                {p.value} {p.unit ?? '(no unit)'}
              </span>{' '}
              <span className="text-ink-700">
                {control ? `${control.name} level ${control.level}` : 'control'} · {formatDateTime(p.at)}
              </span>
              <span className="block text-xs text-alarm-700">{p.message}</span>
            </li>
          );
        })}
      </ul>
    </section>
  );
}

function UnmatchedControls({ data, canManage }: { data: Overview; canManage: boolean }) {
  return (
    <section aria-labelledby="unmatched-heading" className="space-y-2">
      <h2 id="unmatched-heading" className="text-lg font-semibold text-ink-900">
        QC readings without a control material
      </h2>
      <p className="text-sm text-ink-700">Recognised as QC but not matched to one control level: pick the level so the run counts.</p>
      <ul className="space-y-2">
        {data.unmatched.map((r) => (
          <UnmatchedRow key={r.id} reading={r} controls={data.controls.filter((c) => c.analyte === r.analyte)} canManage={canManage} />
        ))}
      </ul>
    </section>
  );
}

function UnmatchedRow({ reading, controls, canManage }: { reading: Overview['unmatched'][number]; controls: Control[]; canManage: boolean }) {
  const action = useAction();
  const [choice, setChoice] = useState(controls[0]?.id ?? '');
  return (
    <li className="flex flex-wrap items-center gap-2 rounded border border-ink-100 bg-white p-2 text-sm">
      <span className="font-medium">{reading.analyte}</span>
      <span className="font-mono">
        {reading.value ?? '—'} {reading.unit}
      </span>
      <span className="text-ink-500">
        {reading.sampleId ?? 'no sample ID'} · {reading.instrumentCode} · {formatDateTime(reading.receivedAt)}
      </span>
      {canManage && controls.length > 0 && (
        <>
          <label className="sr-only" htmlFor={`pick-${reading.id}`}>
            Control material
          </label>
          <select id={`pick-${reading.id}`} className={`${inputClass} w-auto`} value={choice} onChange={(e) => setChoice(e.target.value)}>
            {controls.map((c) => (
              <option key={c.id} value={c.id}>
                {c.name} level {c.level} (lot {c.lotNumber})
              </option>
            ))}
          </select>
          <button type="button" className={buttonClass.secondary} disabled={action.busy} onClick={() => void action.run(`/api/readings/${reading.id}/control`, 'PUT', { controlMaterialId: choice })}>
            Use this control
          </button>
        </>
      )}
      {action.error && <span role="alert" className="text-xs text-alarm-700">{action.error}</span>}
    </li>
  );
}

function SigmaSection({ data, canManage }: { data: Overview; canManage: boolean }) {
  return (
    <section aria-labelledby="sigma-heading" className="space-y-3">
      <h2 id="sigma-heading" className="text-lg font-semibold text-ink-900">
        Sigma metric per test
      </h2>
      <p className="max-w-3xl text-sm text-ink-700">
        σ = (TEa − |bias|) / CV, in percent: bias of the observed mean against the control’s target, CV from the accepted runs.
      </p>
      <div className="relative overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
        <table className="min-w-full text-sm" data-testid="sigma-table">
          <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
            <tr>
              <th scope="col" className="px-3 py-2">Test</th>
              <th scope="col" className="px-3 py-2">Control</th>
              <th scope="col" className="px-3 py-2">Runs</th>
              <th scope="col" className="px-3 py-2">Bias</th>
              <th scope="col" className="px-3 py-2">CV</th>
              <th scope="col" className="px-3 py-2">TEa (source)</th>
              <th scope="col" className="px-3 py-2">Sigma</th>
            </tr>
          </thead>
          <tbody className="divide-y divide-ink-100">
            {data.sigma.flatMap((s) =>
              s.perMaterial.map((m) => {
                const c = data.controls.find((x) => x.id === m.materialId);
                return (
                  <tr key={m.materialId}>
                    <td className="px-3 py-2 font-medium">{s.analyte}</td>
                    <td className="px-3 py-2">{c ? `${c.name} level ${c.level}` : '—'}</td>
                    <td className="px-3 py-2">{m.n}</td>
                    <td className="px-3 py-2 font-mono">{m.biasPercent === null ? '—' : `${m.biasPercent.toFixed(1)} %`}</td>
                    <td className="px-3 py-2 font-mono">{m.cvPercent === null ? '—' : `${m.cvPercent.toFixed(1)} %`}</td>
                    <td className="px-3 py-2 text-xs">{s.teaPercent === null ? 'not set' : `${s.teaPercent} % — ${s.teaSource}`}</td>
                    <td className="px-3 py-2">{m.sigma === null ? <span className="text-xs text-ink-500">{m.note}</span> : `${m.sigma.toFixed(1)} σ, ${m.band}`}</td>
                  </tr>
                );
              }),
            )}
          </tbody>
        </table>
      </div>
      {canManage && <GoalForm analytes={data.analytes} />}
    </section>
  );
}

function GoalForm({ analytes }: { analytes: string[] }) {
  const action = useAction();
  const [form, setForm] = useState({ analyte: analytes[0] ?? '', teaPercent: '', source: '' });
  const [saved, setSaved] = useState(false);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setSaved(!!(await action.run('/api/quality/goals', 'PUT', { ...form, teaPercent: Number(form.teaPercent) })));
  };
  return (
    <form onSubmit={submit} className="flex flex-wrap items-end gap-3" noValidate>
      <Field id="goal-analyte" label="Test">
        <select id="goal-analyte" className={inputClass} value={form.analyte} onChange={(e) => setForm({ ...form, analyte: e.target.value })}>
          {analytes.map((a) => (
            <option key={a}>{a}</option>
          ))}
        </select>
      </Field>
      <Field id="goal-tea" label="TEa (%)" error={action.issues.teaPercent}>
        <input id="goal-tea" inputMode="decimal" className={`${inputClass} w-24`} value={form.teaPercent} onChange={(e) => setForm({ ...form, teaPercent: e.target.value })} />
      </Field>
      <div className="min-w-64 flex-1">
        <Field id="goal-source" label="Where the TEa comes from" error={action.issues.source}>
          <input id="goal-source" className={inputClass} value={form.source} onChange={(e) => setForm({ ...form, source: e.target.value })} />
        </Field>
      </div>
      <button type="submit" className={buttonClass.secondary} disabled={action.busy}>
        Save TEa
      </button>
      {saved && !action.error && <span className="text-xs text-moss-700">Saved.</span>}
      {action.error && !Object.keys(action.issues).length && <span role="alert" className="text-xs text-alarm-700">{action.error}</span>}
    </form>
  );
}
