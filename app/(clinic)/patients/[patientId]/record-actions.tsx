'use client';
// What can be done to the record itself: edit it, close it (deceased, archived) or reopen it, and merge a
// duplicate record of the same animal into it. Each asks for a reason, kept in the audit trail.
import Link from 'next/link';
import { useRouter } from 'next/navigation';
import { useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { useDebounced } from '@/app/components/use-debounced';
import { ApiClientError, fetcher, send } from '@/lib/client/fetcher';
import { speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';

type Status = 'active' | 'deceased' | 'archived' | 'merged';

const STATUS_LABEL: Record<Exclude<Status, 'merged'>, string> = {
  active: 'Active (open record)',
  deceased: 'Deceased',
  archived: 'Archived (no longer a patient here)',
};

export function RecordActions({ patient }: { patient: { id: string; name: string; recordNumber: string; species: string; status: Status } }) {
  const [dialog, setDialog] = useState<'status' | 'merge' | null>(null);
  if (patient.status === 'merged') return null;
  return (
    <div className="flex flex-wrap gap-2">
      <Link href={`/patients/${patient.id}/edit`} className={buttonClass.secondary}>
        Edit record
      </Link>
      <button type="button" className={buttonClass.secondary} onClick={() => setDialog('status')}>
        {patient.status === 'active' ? 'Close record…' : 'Change status…'}
      </button>
      <button type="button" className={buttonClass.secondary} onClick={() => setDialog('merge')}>
        Merge a duplicate…
      </button>
      {dialog === 'status' && <StatusDialog patient={patient} onClose={() => setDialog(null)} />}
      {dialog === 'merge' && <MergeDialog patient={patient} onClose={() => setDialog(null)} />}
    </div>
  );
}

function StatusDialog({ patient, onClose }: { patient: { id: string; status: Status }; onClose: () => void }) {
  const router = useRouter();
  const [status, setStatus] = useState<Exclude<Status, 'merged'>>(patient.status === 'active' ? 'deceased' : 'active');
  const [deceasedOn, setDeceasedOn] = useState('');
  const [reason, setReason] = useState('');
  const [issues, setIssues] = useState<Record<string, string>>({});
  const [failure, setFailure] = useState<string | null>(null);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setIssues({});
    setFailure(null);
    try {
      await send(`/api/patients/${patient.id}/status`, 'POST', { status, reason, ...(status === 'deceased' && deceasedOn ? { deceasedOn } : {}) });
      onClose();
      router.refresh();
    } catch (error) {
      if (error instanceof ApiClientError) setIssues(Object.fromEntries(error.issues.map((i) => [i.path, i.message])));
      setFailure(error instanceof Error ? error.message : 'Could not change the status.');
    }
  };
  return (
    <Modal title="Record status" onClose={onClose}>
      <form onSubmit={submit} noValidate className="space-y-3">
        {failure && <Notice tone="error">{failure}</Notice>}
        <p className="text-sm">A closed record keeps its results and history but takes no new results or tests until it is reopened.</p>
        <Field id="record-status" label="Status" error={issues.status}>
          <select id="record-status" className={inputClass} value={status} onChange={(e) => setStatus(e.target.value as typeof status)} autoFocus>
            {(Object.keys(STATUS_LABEL) as (keyof typeof STATUS_LABEL)[])
              .filter((s) => s !== patient.status || s === 'deceased')
              .map((s) => (
                <option key={s} value={s}>
                  {STATUS_LABEL[s]}
                </option>
              ))}
          </select>
        </Field>
        {status === 'deceased' && (
          <Field id="record-deceased-on" label="Date of death" hint="Today when left empty." error={issues.deceasedOn}>
            <input id="record-deceased-on" type="date" className={inputClass} value={deceasedOn} onChange={(e) => setDeceasedOn(e.target.value)} />
          </Field>
        )}
        <Field id="record-status-reason" label="Reason (required)" error={issues.reason}>
          <input id="record-status-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} aria-invalid={Boolean(issues.reason)} />
        </Field>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={onClose}>
            Cancel
          </button>
          <button type="submit" className={buttonClass.primary}>
            Save status
          </button>
        </div>
      </form>
    </Modal>
  );
}

function MergeDialog({ patient, onClose }: { patient: { id: string; name: string; recordNumber: string; species: string }; onClose: () => void }) {
  const router = useRouter();
  const [q, setQ] = useState('');
  const term = useDebounced(q.trim(), 200);
  const search = useSWR<{ patients: PatientView[] }>(term ? `/api/patients?q=${encodeURIComponent(term)}&status=all&species=${patient.species}&limit=10` : null, fetcher);
  const [chosen, setChosen] = useState<PatientView | null>(null);
  const [reason, setReason] = useState('');
  const [failure, setFailure] = useState<string | null>(null);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    if (!chosen) return;
    setFailure(null);
    try {
      await send(`/api/patients/${patient.id}/merge`, 'POST', { duplicatePatientId: chosen.id, reason });
      onClose();
      router.refresh();
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not merge.');
    }
  };
  const candidates = search.data?.patients.filter((p) => p.id !== patient.id && p.status !== 'merged') ?? [];
  return (
    <Modal title={`Merge a duplicate into ${patient.name} (${patient.recordNumber})`} onClose={onClose}>
      <form onSubmit={submit} noValidate className="space-y-3">
        {failure && <Notice tone="error">{failure}</Notice>}
        <p className="text-sm">
          For one animal registered twice. Every result of the duplicate (with its reviews and history), its tests and alerts move to{' '}
          <span className="font-mono">{patient.recordNumber}</span>; the duplicate is closed as merged and points here. This cannot be undone
          from the screen.
        </p>
        <Field id="merge-search" label={`Duplicate record (${speciesLabel[patient.species] ?? patient.species}): name or record number`}>
          <input id="merge-search" type="search" className={inputClass} value={q} onChange={(e) => setQ(e.target.value)} autoFocus autoComplete="off" />
        </Field>
        <ul className="max-h-48 space-y-1 overflow-auto" aria-label="Records found">
          {candidates.map((p) => (
            <li key={p.id}>
              <button
                type="button"
                aria-pressed={chosen?.id === p.id}
                onClick={() => setChosen(p)}
                className={`w-full rounded border px-2 py-1 text-left text-sm ${chosen?.id === p.id ? 'border-ink-800 bg-ink-100' : 'border-ink-100 hover:border-ink-300'}`}
              >
                {p.name} <span className="font-mono">{p.recordNumber}</span>{' '}
                <span className="text-xs text-ink-500">
                  {p.ownerName ?? 'no owner'} · {p.dateOfBirth ?? 'no birth date'}
                  {p.status !== 'active' && ` · ${p.status}`}
                </span>
              </button>
            </li>
          ))}
          {search.data && candidates.length === 0 && <li className="text-sm text-ink-500">No other {patient.species} record matches.</li>}
        </ul>
        <Field id="merge-reason" label="Why these are the same animal (required)">
          <input id="merge-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} />
        </Field>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={onClose}>
            Cancel
          </button>
          <button type="submit" className={buttonClass.danger} disabled={!chosen || reason.trim().length < 3}>
            {chosen ? `Merge ${chosen.recordNumber} into ${patient.recordNumber}` : 'Choose the duplicate'}
          </button>
        </div>
      </form>
    </Modal>
  );
}
