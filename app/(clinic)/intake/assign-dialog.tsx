'use client';
import { useDebounced } from '@/app/components/use-debounced';
import { useId, useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';
import type { IntakeReading } from './intake-board';
import { speciesWarning, type Suggestion } from '@/lib/clinical/matching';
import { ReadingSummary } from './reading-summary';
import { ProbabilityBadge, Reasons } from './suggested-match';


/**
 * Search, pick, confirm: a reading goes on a patient only after a person chose that patient.
 * The search opens empty with the focus in it; only a confident suggestion is preselected.
 */
export function AssignDialog({ reading, onClose }: { reading: IntakeReading; onClose: (message?: string) => void }) {
  const [query, setQuery] = useState('');
  const [picked, setChosen] = useState<(Pick<PatientView, 'id' | 'name' | 'recordNumber'> & { species?: string }) | null>(null);
  // Once the technician types or picks, the preselected suggestion no longer applies.
  const [touched, setTouched] = useState(false);
  // Which of the chosen patient's running tests this reading fulfils ('' for none), and whether a suggestion was taken.
  const [orderChoice, setOrderChoice] = useState<string | null>(null);
  const [fromSuggestion, setFromSuggestion] = useState(false);
  const ranked = useSWR<{ suggestion: Suggestion; analyte: { code: string; validatedSpecies: string[] } | null }>(`/api/readings/${reading.id}/suggestions`, fetcher);
  const candidates = ranked.data?.suggestion.candidates ?? [];
  const confident = ranked.data?.suggestion.confident ?? false;
  const preselected = !touched && confident ? candidates[0] : undefined;
  const chosen = picked ?? (preselected ? { id: preselected.patientId, name: preselected.patientName, recordNumber: preselected.recordNumber } : null);
  const forChosen = chosen ? candidates.filter((c) => c.patientId === chosen.id && c.orderId) : [];
  const orderId = orderChoice ?? (preselected && !picked ? (preselected.orderId ?? '') : (forChosen[0]?.orderId ?? ''));
  const analyte = ranked.data?.analyte ?? undefined;
  const chosenWarning = chosen
    ? (candidates.find((c) => c.patientId === chosen.id)?.speciesWarning ?? (chosen.species ? speciesWarning(analyte, { name: chosen.name, species: chosen.species }) : null))
    : null;
  const [failure, setFailure] = useState<string | null>(null);
  const [saving, setSaving] = useState(false);
  const q = useDebounced(query.trim(), 200);
  const search = useSWR<{ patients: PatientView[] }>(`/api/patients?q=${encodeURIComponent(q)}&limit=20`, fetcher, {
    keepPreviousData: true,
  });
  const listId = useId();

  const confirm = async () => {
    if (!chosen) return;
    setSaving(true);
    setFailure(null);
    try {
      const { assignment } = await send<{ assignment: { speciesWarning: string | null } }>(`/api/readings/${reading.id}/assign`, 'POST', {
        patientId: chosen.id,
        orderId: orderId || undefined,
        method: fromSuggestion || (preselected && !picked) ? 'suggestion' : 'manual',
      });
      onClose(
        `${reading.analyte} ${reading.value ?? ''} assigned to ${chosen.name} (${chosen.recordNumber}).${assignment.speciesWarning ? ` ${assignment.speciesWarning}` : ''}`,
      );
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(false);
    }
  };

  return (
    <Modal title="Assign reading to a patient" onClose={() => onClose()} initialFocus="patient-search">
      <ReadingSummary reading={reading} />
      {candidates.length > 0 && (
        <section aria-labelledby="suggestions-heading" className="mb-4">
          <h3 id="suggestions-heading" className="mb-1 text-sm font-semibold">
            {confident ? 'Suggested from running tests' : 'Running tests it could be (choose one, or search)'}
          </h3>
          <ol className="max-h-56 space-y-2 overflow-auto">
            {candidates.slice(0, 5).map((c, i) => (
              <li key={`${c.patientId}-${c.orderId}`} className="rounded-md border border-ink-100 bg-white p-2" data-testid="dialog-suggestion">
                <div className="flex items-center gap-2 text-sm">
                  <span className="text-ink-500">{i + 1}.</span>
                  <span className="font-semibold">{c.patientName}</span>
                  <span className="font-mono text-xs">{c.recordNumber}</span>
                  <ProbabilityBadge candidate={c} confident={confident && i === 0} />
                  <button
                    type="button"
                    className={`${buttonClass.quiet} ml-auto`}
                    aria-label={`Select suggestion ${i + 1}`}
                    aria-pressed={chosen?.id === c.patientId}
                    onClick={() => {
                      setTouched(true);
                      setChosen({ id: c.patientId, name: c.patientName, recordNumber: c.recordNumber });
                      setOrderChoice(c.orderId ?? '');
                      setFromSuggestion(true);
                    }}
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
        type="search"
        autoComplete="off"
        value={query}
        onChange={(e) => {
          setTouched(true);
          setQuery(e.target.value);
          setChosen(null);
          setOrderChoice(null);
          setFromSuggestion(false);
        }}
        aria-controls={listId}
        className={inputClass}
        placeholder="e.g. Biscuit, FH-1001 or Whitlow"
      />
      <ul id={listId} role="listbox" aria-label="Matching patients" className="mt-3 max-h-64 space-y-1 overflow-auto">
        {search.data?.patients.length === 0 && <li className="text-sm text-ink-500">No patient matches “{q}”.</li>}
        {search.data?.patients.map((p) => (
          <li key={p.id} role="option" aria-selected={chosen?.id === p.id}>
            <button
              type="button"
              onClick={() => {
                setTouched(true);
                setChosen(p);
                setOrderChoice(null);
                setFromSuggestion(false);
              }}
              className={`w-full rounded-md border px-3 py-2 text-left text-sm ${
                chosen?.id === p.id ? 'border-ink-800 bg-ink-100' : 'border-transparent bg-white hover:border-ink-300'
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
      {chosen && forChosen.length > 0 && (
        <div className="mt-3">
          <label htmlFor="assign-order" className="mb-1 block text-sm font-medium">
            Running test this reading completes
          </label>
          <select id="assign-order" className={inputClass} value={orderId} onChange={(e) => setOrderChoice(e.target.value)}>
            {forChosen.map((c) => (
              <option key={c.orderId} value={c.orderId!}>
                {reading.analyte} for {c.patientName} · {c.reasons.find((r) => r.code === 'timing')?.text ?? ''}
              </option>
            ))}
            <option value="">None (put it on the patient only)</option>
          </select>
        </div>
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
      <div className="mt-4 flex justify-end gap-2">
        <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>
          Cancel
        </button>
        <button type="button" className={buttonClass.primary} disabled={!chosen || saving} onClick={confirm}>
          {chosen ? `Assign to ${chosen.name} (${chosen.recordNumber})` : 'Choose a patient'}
        </button>
      </div>
    </Modal>
  );
}
