'use client';
import { useDebounced } from '@/app/components/use-debounced';
import { useId, useRef, useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';
import type { OrderView } from '@/lib/orders';
import type { IntakeSpecimen } from './intake-board';
import { speciesWarning, type Suggestion } from '@/lib/clinical/matching';
import { SpecimenSummary } from './reading-summary';
import { ProbabilityBadge, Reasons } from './suggested-match';

type Chosen = Pick<PatientView, 'id' | 'name' | 'recordNumber'> & { species?: string };

/** For each reading of the panel, the chosen patient's running test of its analyte (the same tube label first). */
function matchOrders(specimen: IntakeSpecimen, orders: Pick<OrderView, 'id' | 'analyte' | 'sampleId'>[]) {
  const taken = new Set<string>();
  const sameLabel = (o: { sampleId: string | null }) => !!o.sampleId && !!specimen.sampleId && o.sampleId.trim().toLowerCase() === specimen.sampleId.trim().toLowerCase();
  const matched: { readingId: string; analyte: string; orderId: string }[] = [];
  for (const r of specimen.readings) {
    const fits = orders.filter((o) => o.analyte === r.analyte && !taken.has(o.id)).sort((a, b) => Number(sameLabel(b)) - Number(sameLabel(a)));
    if (fits[0]) {
      taken.add(fits[0].id);
      matched.push({ readingId: r.id, analyte: r.analyte, orderId: fits[0].id });
    }
  }
  return matched;
}

/**
 * Search, pick, confirm: a sample's results go on a patient only after a person chose that patient, all
 * of them in one action. The search opens empty with the focus in it; only a confident suggestion is preselected.
 * Keyboard: arrow keys move in the patient list, Enter chooses and moves to the confirm button, Escape closes.
 */
export function AssignDialog({ specimen, onClose }: { specimen: IntakeSpecimen; onClose: (message?: string) => void }) {
  const first = specimen.readings[0];
  const count = specimen.readings.length;
  const [query, setQuery] = useState('');
  const [picked, setChosen] = useState<Chosen | null>(null);
  // Once the technician types or picks, the preselected suggestion no longer applies.
  const [touched, setTouched] = useState(false);
  const [active, setActive] = useState(-1);
  const [fromSuggestion, setFromSuggestion] = useState(false);
  // Orders the person unticked (the rest of the matched ones are fulfilled).
  const [skipped, setSkipped] = useState<Set<string>>(new Set());
  const confirmRef = useRef<HTMLButtonElement>(null);
  const ranked = useSWR<{ suggestion: Suggestion; analyte: { code: string; validatedSpecies: string[] } | null }>(`/api/readings/${first.id}/suggestions`, fetcher);
  const candidates = ranked.data?.suggestion.candidates ?? [];
  const confident = ranked.data?.suggestion.confident ?? false;
  const preselected = !touched && confident ? candidates[0] : undefined;
  const chosen: Chosen | null = picked ?? (preselected ? { id: preselected.patientId, name: preselected.patientName, recordNumber: preselected.recordNumber } : null);
  const analyte = ranked.data?.analyte ?? undefined;
  const chosenWarning = chosen
    ? (candidates.find((c) => c.patientId === chosen.id)?.speciesWarning ?? (chosen.species ? speciesWarning(analyte, { name: chosen.name, species: chosen.species }) : null))
    : null;
  const orders = useSWR<{ orders: OrderView[] }>(chosen ? `/api/orders?status=open&patientId=${chosen.id}` : null, fetcher);
  const matched = orders.data ? matchOrders(specimen, orders.data.orders) : [];
  const orderLabel = (orderId: string) => orders.data?.orders.find((o) => o.id === orderId);
  const [failure, setFailure] = useState<string | null>(null);
  const [saving, setSaving] = useState(false);
  const q = useDebounced(query.trim(), 200);
  const search = useSWR<{ patients: PatientView[] }>(`/api/patients?q=${encodeURIComponent(q)}&limit=20`, fetcher, {
    keepPreviousData: true,
  });
  const found = search.data?.patients ?? [];
  const listId = useId();

  const choose = (patient: Chosen, viaSuggestion: boolean) => {
    setTouched(true);
    setChosen(patient);
    setFromSuggestion(viaSuggestion);
    setSkipped(new Set());
    // Let the button render with the patient's name, then move there: Enter again confirms.
    setTimeout(() => confirmRef.current?.focus(), 0);
  };

  const onSearchKey = (e: React.KeyboardEvent<HTMLInputElement>) => {
    if (e.key === 'ArrowDown' || e.key === 'ArrowUp') {
      e.preventDefault();
      if (!found.length) return;
      setActive((i) => (e.key === 'ArrowDown' ? Math.min(found.length - 1, i + 1) : Math.max(0, i - 1)));
    } else if (e.key === 'Enter') {
      e.preventDefault();
      const patient = found[active] ?? (found.length === 1 ? found[0] : undefined);
      if (patient) choose(patient, false);
    }
  };

  const confirm = async () => {
    if (!chosen) return;
    setSaving(true);
    setFailure(null);
    try {
      const { panel } = await send<{ panel: { speciesWarning: string | null } }>(`/api/specimens/${specimen.id}/assign`, 'POST', {
        patientId: chosen.id,
        readingIds: specimen.readings.map((r) => r.id),
        orderIds: matched.filter((m) => !skipped.has(m.orderId)).map((m) => m.orderId),
        method: fromSuggestion || (preselected && !picked) ? 'suggestion' : 'manual',
      });
      const what = count === 1 ? `${first.analyte} ${first.value ?? ''}` : `${count} results`;
      onClose(`${what} assigned to ${chosen.name} (${chosen.recordNumber}).${panel.speciesWarning ? ` ${panel.speciesWarning}` : ''}`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(false);
    }
  };

  return (
    <Modal title={count === 1 ? 'Assign reading to a patient' : `Assign ${count} results of one sample`} onClose={() => onClose()} initialFocus="patient-search">
      <SpecimenSummary specimen={specimen} />
      {candidates.length > 0 && (
        <section aria-labelledby="suggestions-heading" className="mb-4">
          <h3 id="suggestions-heading" className="mb-1 text-sm font-semibold">
            {confident ? 'Suggested from running tests' : 'Running tests it could be (choose one, or search)'}
          </h3>
          <ol className="max-h-48 space-y-2 overflow-auto">
            {candidates.slice(0, 5).map((c, i) => (
              <li key={`${c.patientId}-${c.orderId}`} className="rounded-md border border-ink-100 bg-white p-2" data-testid="dialog-suggestion">
                <div className="flex flex-wrap items-center gap-2 text-sm">
                  <span className="text-ink-500">{i + 1}.</span>
                  <span className="font-semibold">{c.patientName}</span>
                  <span className="font-mono text-xs">{c.recordNumber}</span>
                  <ProbabilityBadge candidate={c} confident={confident && i === 0} />
                  <button
                    type="button"
                    className={`${buttonClass.quiet} ml-auto`}
                    aria-label={`Select suggestion ${i + 1}`}
                    aria-pressed={chosen?.id === c.patientId}
                    onClick={() => choose({ id: c.patientId, name: c.patientName, recordNumber: c.recordNumber }, true)}
                  >
                    Select
                  </button>
                </div>
                <Reasons candidate={c} />
              </li>
            ))}
          </ol>
        </section>
      )}
      <label htmlFor="patient-search" className="mb-1 block text-sm font-medium">
        Find the patient by name, record number or owner
      </label>
      <input
        id="patient-search"
        // type=text, not search: in a search field the first Escape only clears the text, and Escape must close.
        type="text"
        role="combobox"
        autoFocus
        autoComplete="off"
        value={query}
        onChange={(e) => {
          setQuery(e.target.value);
          setTouched(true);
          setChosen(null);
          setActive(-1);
          setFromSuggestion(false);
        }}
        onKeyDown={onSearchKey}
        aria-controls={listId}
        aria-expanded={found.length > 0}
        aria-activedescendant={found[active] ? `${listId}-${found[active].id}` : undefined}
        className={inputClass}
        placeholder="e.g. Biscuit, FH-1001 or Whitlow"
      />
      <p className="mt-1 text-xs text-ink-500">↑ ↓ move through the list, Enter chooses, Esc closes.</p>
      <ul id={listId} role="listbox" aria-label="Matching patients" className="mt-2 max-h-56 space-y-1 overflow-auto">
        {search.data?.patients.length === 0 && <li className="text-sm text-ink-500">No patient matches “{q}”.</li>}
        {found.map((p, i) => (
          <li key={p.id} id={`${listId}-${p.id}`} role="option" aria-selected={chosen?.id === p.id || i === active}>
            <button
              type="button"
              tabIndex={-1}
              onClick={() => choose(p, false)}
              className={`w-full rounded-md border px-3 py-2 text-left text-sm ${
                chosen?.id === p.id ? 'border-ink-800 bg-ink-100' : i === active ? 'border-ink-500 bg-paper' : 'border-transparent bg-white hover:border-ink-300'
              }`}
            >
              <span className="font-semibold">{p.name}</span> <span className="font-mono text-ink-700">{p.recordNumber}</span>
              <span className="block text-xs text-ink-700">
                {speciesLabel[p.species]}, {p.breed ?? 'breed unknown'}, {sexLabel[p.sex]}, {formatAge(p.dateOfBirth)}
                {p.ownerName && <> · owner {p.ownerName}</>}
              </span>
            </button>
          </li>
        ))}
      </ul>
      {chosen && matched.length > 0 && (
        <fieldset className="mt-3">
          <legend className="mb-1 text-sm font-medium">Running tests these results complete</legend>
          <ul className="space-y-1 text-sm">
            {matched.map((m) => {
              const o = orderLabel(m.orderId);
              return (
                <li key={m.orderId}>
                  <label className="flex items-center gap-2">
                    <input
                      type="checkbox"
                      checked={!skipped.has(m.orderId)}
                      onChange={(e) =>
                        setSkipped((prev) => {
                          const next = new Set(prev);
                          if (e.target.checked) next.delete(m.orderId);
                          else next.add(m.orderId);
                          return next;
                        })
                      }
                    />
                    {m.analyte} for {chosen.name}
                    {o?.sampleId && <span className="font-mono text-xs">tube {o.sampleId}</span>}
                  </label>
                </li>
              );
            })}
          </ul>
        </fieldset>
      )}
      {chosenWarning && (
        <div className="mt-3">
          <Notice tone="error">{chosenWarning}</Notice>
        </div>
      )}
      {failure && (
        <div className="mt-3">
          <Notice tone="error">{failure}</Notice>
        </div>
      )}
      <div className="mt-4 flex flex-wrap justify-end gap-2">
        <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>
          Cancel
        </button>
        <button ref={confirmRef} type="button" className={buttonClass.primary} disabled={!chosen || saving} onClick={confirm} data-testid="confirm-assign">
          {chosen ? `Assign ${count === 1 ? '' : `all ${count} `}to ${chosen.name} (${chosen.recordNumber})` : 'Choose a patient'}
        </button>
      </div>
    </Modal>
  );
}
