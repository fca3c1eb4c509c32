'use client';
import Link from 'next/link';
import { useState } from 'react';
import useSWR from 'swr';
import useSWRInfinite from 'swr/infinite';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { useDebounced } from '@/app/components/use-debounced';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';

type Filters = { patientId: string; actorUserId: string; action: string; from: string; to: string };
type AuditRow = {
  id: number;
  at: string;
  action: string;
  entityType: string;
  entityId: string;
  details: Record<string, unknown>;
  actorName: string | null;
  bridgeName: string | null;
  patientId: string | null;
  patientName: string | null;
  patientRecordNumber: string | null;
};
type Page = { events: AuditRow[]; nextBefore: number | null; actions: string[] };

/** The details as short "key: value" pairs; ids are left out unless nothing else is there. */
function summary(details: Record<string, unknown>) {
  const entries = Object.entries(details).filter(([k, v]) => v !== null && v !== undefined && !/Ids?$|^id$/.test(k));
  return entries
    .map(([k, v]) => `${k}: ${typeof v === 'object' ? JSON.stringify(v) : String(v)}`)
    .join(' · ');
}

export function AuditViewer({ initial }: { initial: Filters }) {
  const [filters, setFilters] = useState<Filters>(initial);
  const [patientQuery, setPatientQuery] = useState('');
  const term = useDebounced(patientQuery.trim(), 200);
  const patients = useSWR<{ patients: { id: string; name: string; recordNumber: string }[] }>(
    term ? `/api/patients?q=${encodeURIComponent(term)}&status=all&limit=10` : null,
    fetcher,
  );
  const staff = useSWR<{ staff: { id: string; displayName: string }[] }>('/api/admin/staff', fetcher);
  const query = new URLSearchParams(Object.entries(filters).filter(([, v]) => v)).toString();
  const pages = useSWRInfinite<Page>(
    (index, previous: Page | null) => {
      if (previous && !previous.nextBefore) return null;
      const before = previous?.nextBefore ? `&before=${previous.nextBefore}` : '';
      return `/api/admin/audit?limit=50${query ? `&${query}` : ''}${before}`;
    },
    fetcher,
  );
  const events = pages.data?.flatMap((p) => p.events) ?? [];
  const actions = pages.data?.[0]?.actions ?? [];
  const last = pages.data?.[pages.data.length - 1];
  const set = (k: keyof Filters) => (e: React.ChangeEvent<HTMLInputElement | HTMLSelectElement>) => setFilters((f) => ({ ...f, [k]: e.target.value }));
  const chosenPatient = events.find((e) => e.patientId === filters.patientId);

  return (
    <div className="space-y-4">
      <form className="grid gap-3 rounded-xl border border-ink-100 bg-white p-4 shadow-sm sm:grid-cols-2 lg:grid-cols-5" aria-label="Filter the audit trail" onSubmit={(e) => e.preventDefault()}>
        <div className="space-y-1">
          <Field id="audit-patient" label="Patient" hint={filters.patientId ? `Showing ${chosenPatient?.patientRecordNumber ?? 'one patient'}` : 'Name or record number'}>
            <input id="audit-patient" type="search" className={inputClass} value={patientQuery} onChange={(e) => setPatientQuery(e.target.value)} autoComplete="off" />
          </Field>
          {patients.data && term && (
            <ul className="max-h-40 overflow-auto rounded border border-ink-100" aria-label="Patients found">
              {patients.data.patients.map((p) => (
                <li key={p.id}>
                  <button
                    type="button"
                    className="w-full px-2 py-1 text-left text-sm hover:bg-ink-100 focus:bg-ink-100"
                    onClick={() => {
                      setFilters((f) => ({ ...f, patientId: p.id }));
                      setPatientQuery(`${p.name} ${p.recordNumber}`);
                    }}
                  >
                    {p.name} <span className="font-mono">{p.recordNumber}</span>
                  </button>
                </li>
              ))}
            </ul>
          )}
          {filters.patientId && (
            <button type="button" className={buttonClass.quiet} onClick={() => (setFilters((f) => ({ ...f, patientId: '' })), setPatientQuery(''))}>
              Any patient
            </button>
          )}
        </div>
        <Field id="audit-person" label="Person">
          <select id="audit-person" className={inputClass} value={filters.actorUserId} onChange={set('actorUserId')}>
            <option value="">Anyone</option>
            {staff.data?.staff.map((s) => (
              <option key={s.id} value={s.id}>
                {s.displayName}
              </option>
            ))}
          </select>
        </Field>
        <Field id="audit-action" label="Action">
          <select id="audit-action" className={inputClass} value={filters.action} onChange={set('action')}>
            <option value="">Any action</option>
            {[...new Set(actions.map((a) => `${a.split('.')[0]}.`))].map((family) => (
              <optgroup key={family} label={family.slice(0, -1)}>
                <option value={family}>all {family.slice(0, -1)} actions</option>
                {actions
                  .filter((a) => a.startsWith(family))
                  .map((a) => (
                    <option key={a} value={a}>
                      {a}
                    </option>
                  ))}
              </optgroup>
            ))}
          </select>
        </Field>
        <Field id="audit-from" label="From">
          <input id="audit-from" type="date" className={inputClass} value={filters.from} onChange={set('from')} />
        </Field>
        <Field id="audit-to" label="To (inclusive)">
          <input id="audit-to" type="date" className={inputClass} value={filters.to} onChange={set('to')} />
        </Field>
      </form>
      {pages.error && <Notice tone="error">Could not load the audit trail: {pages.error.message}</Notice>}
      {pages.data && events.length === 0 && <p className="text-sm text-ink-500">No event matches these filters.</p>}
      <ol className="divide-y divide-ink-100 rounded-xl border border-ink-100 bg-white text-sm shadow-sm" data-testid="audit-events">
        {events.map((e) => (
          <li key={e.id} className="grid gap-x-4 gap-y-1 px-4 py-2 md:grid-cols-[11rem_10rem_1fr]" data-action={e.action}>
            <span className="whitespace-nowrap text-ink-500">{formatDateTime(e.at)}</span>
            <span className="font-medium">{e.actorName ?? (e.bridgeName ? `bridge “${e.bridgeName}”` : 'system')}</span>
            <span className="min-w-0">
              <span className="font-mono text-xs font-semibold">{e.action}</span>{' '}
              {e.patientId && (
                <Link href={`/patients/${e.patientId}`} className="underline-offset-2 hover:underline">
                  {e.patientName} <span className="font-mono">{e.patientRecordNumber}</span>
                </Link>
              )}{' '}
              <span className="text-xs text-ink-500">
                {e.entityType} {e.entityId.slice(0, 8)}
              </span>
              {summary(e.details) && <span className="block break-words text-xs text-ink-700">{summary(e.details)}</span>}
            </span>
          </li>
        ))}
      </ol>
      {last?.nextBefore && (
        <button type="button" className={buttonClass.secondary} onClick={() => pages.setSize(pages.size + 1)} disabled={pages.isValidating}>
          {pages.isValidating ? 'Loading…' : 'Load older events'}
        </button>
      )}
    </div>
  );
}
