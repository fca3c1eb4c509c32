'use client';
import { useState } from 'react';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import type { KitLotRow, Overview } from './types';
import { useAction } from './use-action';

/** Kit lots per test: tests left counting down with every patient, QC and aborted run; low and expiry warnings. */
export function KitLots({ data, canManage }: { data: Overview; canManage: boolean }) {
  return (
    <section aria-labelledby="kits-heading" className="space-y-3">
      <h2 id="kits-heading" className="text-lg font-semibold text-ink-900">
        Kit lots
      </h2>
      <p className="max-w-3xl text-sm text-ink-700">
        Each patient, QC or aborted run uses one test of the lot loaded in the instrument. A result produced on an expired lot is marked on the result.
      </p>
      <div className="relative overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
        <table className="min-w-full text-sm" data-testid="kit-lots">
          <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
            <tr>
              <th scope="col" className="px-3 py-2">Test</th>
              <th scope="col" className="px-3 py-2">Lot</th>
              <th scope="col" className="px-3 py-2">Expires</th>
              <th scope="col" className="px-3 py-2">Tests left</th>
              <th scope="col" className="px-3 py-2">Used (patient / QC / aborted)</th>
              <th scope="col" className="px-3 py-2">Loaded in</th>
              <th scope="col" className="px-3 py-2">Opened · storage</th>
              <th scope="col" className="px-3 py-2"><span className="sr-only">Actions</span></th>
            </tr>
          </thead>
          <tbody className="divide-y divide-ink-100">
            {data.kitLots.length === 0 && (
              <tr>
                <td colSpan={8} className="px-3 py-3 text-ink-500">No kit lots recorded.</td>
              </tr>
            )}
            {data.kitLots.map((lot) => (
              <KitLotLine key={lot.id} lot={lot} data={data} canManage={canManage} />
            ))}
          </tbody>
        </table>
      </div>
      {canManage && <NewKitLot data={data} />}
    </section>
  );
}

function KitLotLine({ lot, data, canManage }: { lot: KitLotRow; data: Overview; canManage: boolean }) {
  const action = useAction();
  const warn = lot.stock.warnings.length > 0;
  return (
    <tr data-testid="kit-lot" data-lot={lot.lotNumber} className={lot.stock.expired || lot.stock.remaining === 0 ? 'bg-alarm-100/40' : warn ? 'bg-signal-100/40' : undefined}>
      <td className="px-3 py-2 font-medium">{lot.analyte}</td>
      <td className="px-3 py-2 font-mono">{lot.lotNumber}</td>
      <td className="px-3 py-2">{lot.expiresOn}</td>
      <td className="px-3 py-2">
        <span className="font-mono font-semibold" data-testid="tests-left">
          {lot.stock.remaining}
        </span>{' '}
        of {lot.stock.total}
        {lot.stock.warnings.map((w) => (
          <span key={w} className="block text-xs font-semibold text-alarm-700">
            {w}
          </span>
        ))}
      </td>
      <td className="px-3 py-2 font-mono text-xs">
        {lot.usage.patient} / {lot.usage.qc} / {lot.usage.aborted}
      </td>
      <td className="px-3 py-2">
        {canManage ? (
          <>
            <label className="sr-only" htmlFor={`lot-instrument-${lot.id}`}>
              Loaded in
            </label>
            <select
              id={`lot-instrument-${lot.id}`}
              className={`${inputClass} w-auto`}
              value={lot.instrumentId ?? ''}
              disabled={action.busy}
              onChange={(e) => void action.run(`/api/quality/kit-lots/${lot.id}`, 'PATCH', { instrumentId: e.target.value || null })}
            >
              <option value="">Not loaded</option>
              {data.instruments
                .filter((i) => i.analytes.includes(lot.analyte))
                .map((i) => (
                  <option key={i.id} value={i.id}>
                    {i.name}
                  </option>
                ))}
            </select>
          </>
        ) : (
          (lot.instrumentName ?? 'not loaded')
        )}
      </td>
      <td className="px-3 py-2 text-xs">
        {lot.openedOn ? `opened ${lot.openedOn}` : 'not opened'}
        {lot.storageNotes ? ` · ${lot.storageNotes}` : ''}
      </td>
      <td className="px-3 py-2 text-right">
        {canManage && (
          <div className="flex justify-end gap-2">
            {!lot.openedOn && (
              <button type="button" className={buttonClass.quiet} onClick={() => void action.run(`/api/quality/kit-lots/${lot.id}`, 'PATCH', { openedOn: new Date().toISOString().slice(0, 10) })}>
                Opened today
              </button>
            )}
            <button type="button" className={buttonClass.quiet} onClick={() => void action.run(`/api/quality/kit-lots/${lot.id}`, 'PATCH', { finished: true })}>
              Finished
            </button>
          </div>
        )}
        {action.error && <span role="alert" className="block text-xs text-alarm-700">{action.error}</span>}
      </td>
    </tr>
  );
}

function NewKitLot({ data }: { data: Overview }) {
  const action = useAction();
  const [open, setOpen] = useState(false);
  const [form, setForm] = useState({ analyte: data.analytes[0] ?? '', lotNumber: '', expiresOn: '', testsPerKit: '20', kits: '1', openedOn: '', storageNotes: '', instrumentId: '', lowAt: '5' });
  const set = (k: keyof typeof form) => (e: React.ChangeEvent<HTMLInputElement | HTMLSelectElement>) => setForm({ ...form, [k]: e.target.value });
  if (!open) {
    return (
      <button type="button" className={buttonClass.secondary} onClick={() => setOpen(true)}>
        Record a kit lot
      </button>
    );
  }
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const ok = await action.run('/api/quality/kit-lots', 'POST', {
      ...form,
      testsPerKit: Number(form.testsPerKit),
      kits: Number(form.kits),
      lowAt: Number(form.lowAt),
      openedOn: form.openedOn || null,
      instrumentId: form.instrumentId || null,
      storageNotes: form.storageNotes || null,
    });
    if (ok) setOpen(false);
  };
  return (
    <form onSubmit={submit} className="grid gap-3 rounded-lg border border-ink-100 bg-white p-4 sm:grid-cols-2 lg:grid-cols-4" noValidate>
      <Field id="kl-analyte" label="Test">
        <select id="kl-analyte" className={inputClass} value={form.analyte} onChange={set('analyte')}>
          {data.analytes.map((a) => (
            <option key={a}>{a}</option>
          ))}
        </select>
      </Field>
      <Field id="kl-lot" label="Lot number" error={action.issues.lotNumber}>
        <input id="kl-lot" className={inputClass} value={form.lotNumber} onChange={set('lotNumber')} />
      </Field>
      <Field id="kl-expires" label="Expires" error={action.issues.expiresOn}>
        <input id="kl-expires" type="date" className={inputClass} value={form.expiresOn} onChange={set('expiresOn')} />
      </Field>
      <Field id="kl-tests" label="Tests per kit" error={action.issues.testsPerKit}>
        <input id="kl-tests" inputMode="numeric" className={inputClass} value={form.testsPerKit} onChange={set('testsPerKit')} />
      </Field>
      <Field id="kl-kits" label="Kits in the lot" error={action.issues.kits}>
        <input id="kl-kits" inputMode="numeric" className={inputClass} value={form.kits} onChange={set('kits')} />
      </Field>
      <Field id="kl-low" label="Warn at tests left" error={action.issues.lowAt}>
        <input id="kl-low" inputMode="numeric" className={inputClass} value={form.lowAt} onChange={set('lowAt')} />
      </Field>
      <Field id="kl-opened" label="Opened" error={action.issues.openedOn}>
        <input id="kl-opened" type="date" className={inputClass} value={form.openedOn} onChange={set('openedOn')} />
      </Field>
      <Field id="kl-instrument" label="Loaded in" error={action.issues.instrumentId}>
        <select id="kl-instrument" className={inputClass} value={form.instrumentId} onChange={set('instrumentId')}>
          <option value="">Not loaded</option>
          {data.instruments
            .filter((i) => i.analytes.includes(form.analyte))
            .map((i) => (
              <option key={i.id} value={i.id}>
                {i.name}
              </option>
            ))}
        </select>
      </Field>
      <div className="sm:col-span-2">
        <Field id="kl-storage" label="Storage notes" hint="e.g. 2–8 °C, bring to room temperature before use">
          <input id="kl-storage" className={inputClass} value={form.storageNotes} onChange={set('storageNotes')} />
        </Field>
      </div>
      <div className="flex items-end gap-2 sm:col-span-2">
        <button type="submit" className={buttonClass.primary} disabled={action.busy}>
          Save lot
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
