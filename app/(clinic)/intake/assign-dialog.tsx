'use client';
import { useEffect, useId, useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';
import type { IntakeReading } from './intake-board';
import { ReadingSummary } from './reading-summary';

function useDebounced<T>(value: T, ms: number) {
  const [debounced, setDebounced] = useState(value);
  useEffect(() => {
    const timer = setTimeout(() => setDebounced(value), ms);
    return () => clearTimeout(timer);
  }, [value, ms]);
  return debounced;
}

/**
 * Search, pick, confirm: a reading goes on a patient only after a person chose that patient.
 * A printed sample ID pre-fills the search but never selects anyone by itself.
 */
export function AssignDialog({ reading, onClose }: { reading: IntakeReading; onClose: (message?: string) => void }) {
  const [query, setQuery] = useState(reading.sampleId ?? reading.patientRef ?? '');
  const [chosen, setChosen] = useState<PatientView | null>(null);
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
      await send(`/api/readings/${reading.id}/assign`, 'POST', { patientId: chosen.id });
      onClose(`${reading.analyte} ${reading.value ?? ''} assigned to ${chosen.name} (${chosen.recordNumber}).`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(false);
    }
  };

  return (
    <Modal title="Assign reading to a patient" onClose={() => onClose()}>
      <ReadingSummary reading={reading} />
      <label htmlFor="patient-search" className="mb-1 block text-sm font-medium">
        Find the patient by name, record number or owner
      </label>
      <input
        id="patient-search"
        type="search"
        autoFocus
        autoComplete="off"
        value={query}
        onChange={(e) => {
          setQuery(e.target.value);
          setChosen(null);
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
              onClick={() => setChosen(p)}
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
