'use client';
import Link from 'next/link';
import { useDeferredValue, useState } from 'react';
import useSWR from 'swr';
import { createColumnHelper } from '@tanstack/react-table';
import { DataTable } from '@/app/components/data-table';
import { Notice, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { SPECIES } from '@/db/vocabulary';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';

const column = createColumnHelper<PatientView>();
const columns = [
  column.accessor('recordNumber', { header: 'Record', cell: (c) => <span className="font-mono">{c.getValue()}</span> }),
  column.accessor('name', {
    header: 'Name',
    cell: (c) => (
      <>
        <Link href={`/patients/${c.row.original.id}`} className="font-semibold text-ink-800 underline-offset-2 hover:underline">
          {c.getValue()}
        </Link>
        {c.row.original.status !== 'active' && <span className="ml-2 rounded bg-ink-100 px-1.5 py-0.5 text-xs text-ink-700">{c.row.original.status}</span>}
      </>
    ),
  }),
  column.accessor((p) => `${speciesLabel[p.species]}${p.breed ? `, ${p.breed}` : ''}`, { id: 'species', header: 'Species, breed' }),
  column.accessor('dateOfBirth', {
    header: 'Sex, age',
    // Oldest first when sorted ascending: by date of birth, not by the printed age.
    sortingFn: (a, b) => (a.original.dateOfBirth ?? '9999').localeCompare(b.original.dateOfBirth ?? '9999'),
    cell: (c) => `${sexLabel[c.row.original.sex]}, ${formatAge(c.getValue())}`,
  }),
  column.accessor((p) => p.ownerName ?? '—', { id: 'owner', header: 'Owner' }),
  column.accessor((p) => p.attendingVetName ?? '—', { id: 'attending', header: 'Attending' }),
];

export function PatientSearch() {
  const [query, setQuery] = useState('');
  const [species, setSpecies] = useState('');
  const [status, setStatus] = useState('open');
  const q = useDeferredValue(query.trim());
  const filters = `${species ? `&species=${species}` : ''}${status !== 'open' ? `&status=${status}` : ''}`;
  const { data, error } = useSWR<{ patients: PatientView[] }>(`/api/patients?q=${encodeURIComponent(q)}&limit=100${filters}`, fetcher, {
    keepPreviousData: true,
  });
  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end gap-3">
        <div className="w-full max-w-md">
          <label htmlFor="patients-q" className="mb-1 block text-sm font-medium">
            Search by name, record number, owner or phone
          </label>
          <input id="patients-q" type="search" className={inputClass} value={query} onChange={(e) => setQuery(e.target.value)} />
        </div>
        <div>
          <label htmlFor="patients-species" className="mb-1 block text-sm font-medium">
            Species
          </label>
          <select id="patients-species" className={inputClass} value={species} onChange={(e) => setSpecies(e.target.value)}>
            <option value="">All</option>
            {SPECIES.map((s) => (
              <option key={s} value={s}>
                {speciesLabel[s]}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="patients-status" className="mb-1 block text-sm font-medium">
            Records
          </label>
          <select id="patients-status" className={inputClass} value={status} onChange={(e) => setStatus(e.target.value)}>
            <option value="open">Open</option>
            <option value="deceased">Deceased</option>
            <option value="archived">Archived</option>
            <option value="merged">Merged</option>
            <option value="all">All</option>
          </select>
        </div>
      </div>
      {error && <Notice tone="error">Could not load patients: {error.message}</Notice>}
      <DataTable columns={columns} rows={data?.patients ?? []} rowKey={(p) => p.id} empty={data ? 'No patient matches.' : 'Loading…'} testId="patient-list" />
    </div>
  );
}
